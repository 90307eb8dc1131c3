using TeachServe.Core.Learning;
using TeachServe.Core.Model;

namespace TeachServe.Core.Tests.Engine;

public class ThresholdToyTests
{
    // q = 1/(1+e^alpha). Source: REFERENCES.md A, "disagreement factor", closed form [derived]; re-derived here
    // through the logistic identity q = 1 − σ(alpha) with σ(a) = e^a/(1+e^a).
    [Theory]
    [InlineData(0.5, 0.377541)]
    [InlineData(1.0, 0.268941)]
    [InlineData(2.0, 0.119203)]
    public void Disagreement_factor_matches_closed_form(double alpha, double expected)
    {
        Assert.Equal(expected, ModelVersion.DisagreementFactor(alpha), 6);
        Assert.Equal(1.0 - (Math.Exp(alpha) / (1.0 + Math.Exp(alpha))), ModelVersion.DisagreementFactor(alpha), 12);
    }

    // Threshold toy: items {1,2,3,4}, θ ∈ {1..5}, target θ = 3, uniform prior.
    // Source: REFERENCES.md A, model of Singla et al., ICML 2014 [derived]; the second method here is the
    // closed form E = 1.5q/(1+4q) after {2,3}, worked by hand from Q(h|A) = P0(h)·q^(mistakes).
    [Fact]
    public void Errors_and_prior_expected_error_match_the_toy()
    {
        var model = TinyModels.Thresholds(4, 3, alpha: 2);
        Assert.Equal([0.5, 0.25, 0, 0.25, 0.5], model.Error.ToArray());
        Assert.Equal(0.3, model.Summary.PriorExpectedError, 12);
        Assert.Equal(2, model.TargetIndex);
    }

    [Fact]
    public void Noise_free_teaching_set_is_the_two_neighbours_of_the_boundary()
    {
        // Goldman & Kearns, "On the complexity of teaching", JCSS 50(1), 1995 [via REFERENCES.md A]:
        // teaching dimension of an interior threshold is 2, the two items beside the boundary.
        var model = TinyModels.Thresholds(4, 3, alpha: 2);
        Assert.Equal(new[] { 1, 2 }, model.CoverSequence.Order().ToArray()); // item indices of x = 2 and x = 3
        Assert.Equal(2, model.Summary.TeachingDimensionEstimate);
    }

    [Theory]
    [InlineData(1)] // all positive
    [InlineData(9)] // all negative (θ beyond the last item)
    public void Teaching_dimension_of_a_constant_target_is_one(int target)
    {
        // Goldman & Kearns 1995 [via REFERENCES.md A]: 1 for an all-positive or all-negative target.
        var model = TinyModels.Thresholds(8, target, alpha: 2);
        Assert.Equal(1, model.Summary.TeachingDimensionEstimate);
    }

    [Theory]
    [InlineData(6, 2)]
    [InlineData(10, 5)]
    [InlineData(12, 12)]
    public void Teaching_dimension_of_interior_thresholds_is_two_on_longer_lines(int n, int target)
    {
        // Goldman & Kearns 1995 [via REFERENCES.md A]; the cover must pick the neighbours x = θ−1 and x = θ.
        var model = TinyModels.Thresholds(n, target, alpha: 2);
        Assert.Equal(new[] { target - 2, target - 1 }, model.CoverSequence.Order().ToArray());
    }

    [Fact]
    public void Learner_error_after_the_teaching_set_matches_the_toy()
    {
        // REFERENCES.md A threshold toy [derived]: after {2,3} with alpha = 2, E = 0.121075; closed form 1.5q/(1+4q).
        var model = TinyModels.Thresholds(4, 3, alpha: 2);
        var belief = new Belief(model, model.Q, lapse: 1.0);
        belief.Teach(1, 0);
        belief.Teach(2, 1);
        Assert.Equal(0.121075, belief.LearnerExpectedError(), 6);
        var q = model.Q;
        Assert.Equal(1.5 * q / (1 + (4 * q)), belief.LearnerExpectedError(), 12);
    }

    [Fact]
    public void Surrogate_stopping_test_fires_only_after_all_four_items()
    {
        // REFERENCES.md A threshold toy [derived]: with ε = 0.1 the test Σ Q(h|A)·err(h) ≤ ε·P0(h*) first holds
        // at 4 items, where E = 0.058264 (by hand: (q² + q/2)/(1 + 2q + 2q²)).
        var model = TinyModels.Thresholds(4, 3, alpha: 2);
        var sequence = TeachingOrders.StochasticGreedy(model, model.Q, 4);
        Assert.Equal(4, sequence.Length);
        var learner = model.Prior.ToArray();
        var firedAt = -1;
        for (var t = 0; t < sequence.Length; t++)
        {
            TeachingOrders.ApplyShown(model, learner, sequence[t], model.Q);
            var surrogate = learner.Select((w, h) => w * model.Error[h]).Sum();
            if (firedAt < 0 && surrogate <= 0.1 * model.Prior[model.TargetIndex])
            {
                firedAt = t + 1;
            }
        }

        Assert.Equal(4, firedAt);
        var expected = learner.Select((w, h) => w * model.Error[h]).Sum() / learner.Sum();
        Assert.Equal(0.058264, expected, 6);
        var q = model.Q;
        Assert.Equal(((q * q) + (q / 2)) / (1 + (2 * q) + (2 * q * q)), expected, 12);
    }
}
