using TeachServe.Core.Learning;
using TeachServe.Core.LiveQuality;
using TeachServe.Core.Model;
using TeachServe.Core.Tests.Engine;
using TeachServe.Core.Tests.Support;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

public sealed class LiveBeliefTests
{
    private static readonly ModelVersion Model = TinyModels.Random(seed: 9, m: 16, teach: 12, test: 8, labels: 3, alpha: 1.2, lapse: 0.1);

    private static Belief Released()
    {
        var belief = new Belief(Model, Model.Q, 0.1);
        var random = new SeededRandom(1);
        for (var i = 0; i < 8; i++)
        {
            var item = random.NextInt(Model.TeachCount);
            belief.Teach(item, random.NextInt(3));
        }

        return belief;
    }

    [Fact]
    public void Without_forgetting_it_is_the_test_mode_belief()
    {
        var reference = Released();
        var live = new LiveBelief(Model, 0.1, reference.Weights, ForgettingRate.None);
        var random = new SeededRandom(2);
        for (var t = 0; t < 40; t++)
        {
            var item = random.NextInt(Model.ItemCount);
            var label = random.NextInt(3);
            var expected = reference.Observe(item, label);
            var actual = live.Observe(new LiveCheck(item, label, Model.TrueLabel(item), ElapsedDays: 3));
            AssertNear.Relative(expected, actual, 1e-12, "predictive probability");
            for (var h = 0; h < Model.HypothesisCount; h++)
            {
                AssertNear.Absolute(reference.Weights[h], live.Weights[h], 1e-12, $"β({h}) at t = {t}");
            }
        }

        AssertNear.Absolute(reference.PredictedError(), live.PredictedRuleError(), 1e-12);
    }

    [Fact]
    public void One_check_forgets_then_observes()
    {
        var start = Released();
        var rate = new ForgettingRate(0.1, 0.05);
        var live = new LiveBelief(Model, 0.1, start.Weights, rate);
        const int item = 3;
        const int label = 1;
        live.Observe(new LiveCheck(item, label, Model.TrueLabel(item), ElapsedDays: 2));

        // By hand: keep = 0.9·e^(−0.1); w = keep·β + (1−keep)·P0; then × ((1−lapse)·1[h(x)=a] + lapse/K), normalised.
        var keep = 0.9 * Math.Exp(-0.1);
        var w = new double[Model.HypothesisCount];
        for (var h = 0; h < w.Length; h++)
        {
            w[h] = ((keep * start.Weights[h]) + ((1 - keep) * Model.Prior[h])) * (Model.Predict(h, item) == label ? 0.9 + (0.1 / 3) : 0.1 / 3);
        }

        var total = w.Sum();
        for (var h = 0; h < w.Length; h++)
        {
            AssertNear.Absolute(w[h] / total, live.Weights[h], 1e-12, $"β({h})");
        }
    }

    [Fact]
    public void Checks_outside_the_model_only_forget_and_the_belief_returns_to_the_prior()
    {
        var live = new LiveBelief(Model, 0.1, Released().Weights, new ForgettingRate(0.05));
        for (var t = 0; t < 600; t++)
        {
            Assert.True(double.IsNaN(live.Observe(new LiveCheck(null, 0, 1))));
        }

        for (var h = 0; h < Model.HypothesisCount; h++)
        {
            AssertNear.Absolute(Model.Prior[h], live.Weights[h], 1e-9);
        }

        // Both views count the same error: the predicted answer error maps the rule error as the gate does.
        var rule = live.PredictedRuleError();
        AssertNear.Absolute((0.9 * rule) + (0.1 * 2 / 3), live.PredictedAnswerError(), 1e-12);
    }

    [Fact]
    public void Model_view_agrees_with_the_observed_live_check_error_of_a_stable_annotator()
    {
        // Both views count wrong answers on live checks. An annotator holding one rule with lapse 0.1 answers 600
        // checks; the live belief's predicted answer error and the observed error rate must agree within 3 binomial
        // standard errors, for each of several rules.
        var random = new SeededRandom(31);
        foreach (var rule in new[] { Model.TargetIndex, 2, 7, 11 })
        {
            var live = new LiveBelief(Model, 0.1, Model.Prior, ForgettingRate.None);
            var wrong = 0;
            const int n = 600;
            for (var t = 0; t < n; t++)
            {
                var item = random.NextInt(Model.ItemCount);
                var label = random.NextDouble() < 0.1 ? random.NextInt(3) : Model.Predict(rule, item);
                var check = new LiveCheck(item, label, Model.TrueLabel(item));
                wrong += check.Wrong ? 1 : 0;
                live.Observe(check);
            }

            var observed = (double)wrong / n;
            var expected = (0.9 * Model.Error[rule]) + (0.1 * 2 / 3);
            AssertNear.Absolute(expected, live.PredictedAnswerError(), 0.02, $"rule {rule}: model view against the rule's own answer error");
            AssertNear.Absolute(observed, live.PredictedAnswerError(), 3 * Math.Sqrt(expected * (1 - expected) / n) + 0.02, $"rule {rule}: model view against the observed rate");
        }
    }

    [Fact]
    public void Mistake_probability_and_confusions_follow_the_belief()
    {
        var live = new LiveBelief(Model, 0.1, Released().Weights, ForgettingRate.None);
        var item = 5;
        var expected = Enumerable.Range(0, Model.HypothesisCount).Where(h => Model.Mistake(h, item)).Sum(h => live.Weights[h]);
        AssertNear.Absolute(expected, live.MistakeProbability(item), 1e-12);
        var confusions = live.LikelyConfusions(6);
        Assert.Equal(6, confusions.Count);
        Assert.All(confusions, c => Assert.NotEqual(c.TrueLabel, c.GivenLabel));
        Assert.True(confusions.Zip(confusions.Skip(1)).All(p => p.First.Rate >= p.Second.Rate));

        // Σ over confusions of rate × |items of that label| = Σ_h β(h)·|mistakes of h| [derived].
        var perLabel = Enumerable.Range(0, 3).Select(t => Enumerable.Range(0, Model.ItemCount).Count(i => Model.TrueLabel(i) == t)).ToArray();
        var all = live.LikelyConfusions(int.MaxValue);
        var mistakes = Enumerable.Range(0, Model.HypothesisCount).Sum(h => live.Weights[h] * Model.Error[h] * Model.ItemCount);
        AssertNear.Relative(mistakes, all.Sum(c => c.Rate * perLabel[c.TrueLabel]), 1e-9);
    }

    [Fact]
    public void The_forgetting_rate_is_recovered_from_simulated_records()
    {
        // Records drawn from the model itself: a rule from the release belief, each check a fall-back to the prior with
        // probability 0.03, answers with lapse 0.1. The 95 % profile interval must contain 0.03.
        var model = TinyModels.Random(seed: 17, m: 30, teach: 30, test: 10, labels: 2, alpha: 1.0, lapse: 0.1);
        var release = model.Prior.ToArray();
        var random = new SeededRandom(99);
        var records = new List<LiveRecord>();
        for (var a = 0; a < 40; a++)
        {
            var h = random.Choose(release, release.Sum());
            var checks = new List<LiveCheck>();
            for (var t = 0; t < 300; t++)
            {
                if (random.NextDouble() < 0.03)
                {
                    h = random.Choose(model.Prior, 1.0);
                }

                var item = random.NextInt(model.ItemCount);
                var label = random.NextDouble() < 0.1 ? random.NextInt(2) : model.Predict(h, item);
                checks.Add(new LiveCheck(item, label, model.TrueLabel(item)));
            }

            records.Add(new LiveRecord(release, checks));
        }

        var fit = ForgettingFit.Fit(model, 0.1, records);
        Assert.InRange(0.03, fit.Low, fit.High);
        Assert.True(fit.High - fit.Low < 0.05, $"interval [{fit.Low}, {fit.High}]");
        Assert.True(fit.MaxLogLikelihood >= ForgettingFit.LogLikelihood(model, 0.1, records, 0.0));
    }
}
