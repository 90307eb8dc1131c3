using TeachServe.Core.Fitting;
using TeachServe.Core.Model;
using TeachServe.Core.Simulation;
using TeachServe.Core.Tests.Engine;

namespace TeachServe.Core.Tests.Fitting;

public class LearnerFitRecoveryTests
{
    /// <summary>
    /// Sessions of the switching learner (DESIGN 2.2) taught every teach item in a random order, then tested:
    /// exactly the generative model the fit assumes, so its profile intervals should cover the true values.
    /// </summary>
    private static List<RecordedSession> Simulate(ModelVersion model, double alpha, double lapse, int sessions, ulong seed)
    {
        var result = new List<RecordedSession>(sessions);
        for (var s = 0; s < sessions; s++)
        {
            var random = new SeededRandom(SeededRandom.Derive(seed, (ulong)s));
            var learner = new SimulatedLearner(model, LearnerVariant.Assumed, alpha, lapse, 0.1, random);
            var order = Enumerable.Range(0, model.TeachCount).ToArray();
            for (var i = order.Length - 1; i > 0; i--)
            {
                var j = random.NextInt(i + 1);
                (order[i], order[j]) = (order[j], order[i]);
            }
            var steps = new List<RecordedStep>();
            foreach (var item in order)
            {
                steps.Add(new RecordedStep(item, learner.Answer(item), Teaching: true));
                learner.SeeFeedback(item);
            }
            for (var item = model.TeachCount; item < model.ItemCount; item++)
                steps.Add(new RecordedStep(item, learner.Answer(item), Teaching: false));
            result.Add(new RecordedSession(steps));
        }
        return result;
    }

    // Coverage of 95 % profile-likelihood intervals (Wilks 1938): with 20 seeded repetitions over a 2×2 grid,
    // at least 18 must cover the true alpha and at least 18 the true lapse (the issue's ≥ 90 % requirement).
    [Fact]
    public void Fitting_recovers_alpha_and_lapse_within_the_reported_interval_in_at_least_90_percent_of_repetitions()
    {
        var grid = new[] { (Alpha: 0.8, Lapse: 0.05), (Alpha: 0.8, Lapse: 0.2), (Alpha: 2.0, Lapse: 0.05), (Alpha: 2.0, Lapse: 0.2) };
        int runs = 0, alphaCovered = 0, lapseCovered = 0;
        foreach (var (alpha, lapse) in grid)
        {
            var model = TinyModels.Thresholds(10, 5, alpha, lapse, testItems: 4);
            for (var rep = 0; rep < 5; rep++)
            {
                var sessions = Simulate(model, alpha, lapse, sessions: 40, seed: (ulong)(7919 * (runs + 1)));
                var fit = LearnerFit.Fit(model, sessions);
                runs++;
                if (fit.AlphaProfile.Interval.Contains(alpha)) alphaCovered++;
                if (fit.LapseProfile.Interval.Contains(lapse)) lapseCovered++;
            }
        }
        Assert.Equal(20, runs);
        Assert.True(alphaCovered >= 18, $"alpha covered in {alphaCovered} of {runs}");
        Assert.True(lapseCovered >= 18, $"lapse covered in {lapseCovered} of {runs}");
    }

    [Fact]
    public void The_estimates_move_with_the_truth()
    {
        var low = TinyModels.Thresholds(10, 5, 0.5, 0.05, testItems: 4);
        var high = TinyModels.Thresholds(10, 5, 4.0, 0.3, testItems: 4);
        var fitLow = LearnerFit.Fit(low, Simulate(low, 0.5, 0.05, 60, 11));
        var fitHigh = LearnerFit.Fit(high, Simulate(high, 4.0, 0.3, 60, 11));
        Assert.True(fitLow.Alpha < fitHigh.Alpha, $"{fitLow.Alpha} vs {fitHigh.Alpha}");
        Assert.True(fitLow.Lapse < fitHigh.Lapse, $"{fitLow.Lapse} vs {fitHigh.Lapse}");
    }
}
