using TeachServe.Core.LiveQuality;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;
using TeachServe.Core.Tests.Engine;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

/// <summary>A session that starts from given weights (a refresher) instead of the prior.</summary>
public sealed class RefresherSessionTests
{
    private static readonly GateSettings Gate = new() { TargetError = 0.1, MaxTeachingItems = 8, Test = new TestSettings { MaxItems = 4, Delta = 0.4, Alpha = 0.3, Beta = 0.3 } };

    [Fact]
    public void Starting_from_the_prior_as_weights_is_the_same_session_as_starting_without()
    {
        var model = TinyModels.Thresholds(8, 5, alpha: 2.0, lapse: 0.02, testItems: 4);
        var plain = SessionRun.Start(model, new SessionOptions { Gate = Gate, Seed = 7 });
        var weighted = SessionRun.Start(model, new SessionOptions { Gate = Gate, Seed = 7, StartWeights = model.Prior.ToArray() });
        var hypothesis = 1;
        while (!plain.IsEnded)
        {
            Assert.Equal(plain.CurrentItem, weighted.CurrentItem);
            Assert.Equal(plain.PredictedError, weighted.PredictedError, 12);
            var label = model.Predict(hypothesis, plain.CurrentItem);
            plain.Answer(label);
            weighted.Answer(label);
        }

        Assert.True(weighted.IsEnded);
        Assert.Equal(plain.Phase, weighted.Phase);
    }

    [Fact]
    public void A_start_on_one_rule_predicts_that_rules_error_and_a_replay_starts_from_the_same_weights()
    {
        var model = TinyModels.Thresholds(8, 5, alpha: 2.0, lapse: 0.02, testItems: 4);
        const int drifted = 1;
        var weights = new double[model.HypothesisCount];
        weights[drifted] = 3.0; // not normalised: the session normalises
        var options = RefresherSessions.Options(new SessionOptions { Gate = Gate, Seed = 9 }, new RefresherSettings { TargetRuleError = 0.1, MaxItems = 5 }, weights);

        Assert.Equal(PolicyNames.Adaptive, options.Policy);
        Assert.Equal(5, options.Gate.MaxTeachingItems);
        Assert.Equal(0, options.Gate.Retakes);
        var run = SessionRun.Start(model, options);
        Assert.Equal(model.Error[drifted], run.PredictedError, 12);
        Assert.Equal(1.0, run.Belief[drifted], 12);
        Assert.True(model.Mistake(drifted, run.CurrentItem), "the first item is one the held rule gets wrong");

        var labels = new List<int>();
        while (!run.IsEnded)
        {
            var label = model.Predict(model.TargetIndex, run.CurrentItem);
            labels.Add(label);
            run.Answer(label);
        }

        Assert.InRange(run.TaughtCount, 1, 5);
        var replay = SessionRun.Replay(model, options, labels);
        Assert.Equal(run.Phase, replay.Phase);
        Assert.Equal(run.PredictedError, replay.PredictedError, 12);
    }
}
