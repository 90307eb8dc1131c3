using MathNet.Numerics.Distributions;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Statistics;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Engine;

public class LearnerAndGateTests
{
    [Fact]
    public void Keep_or_redraw_learners_hold_hypotheses_with_the_posterior_frequencies()
    {
        // Singla et al., ICML 2014, learner model [derived, REFERENCES.md A]: after examples A the held
        // hypothesis is distributed as P(h|A). Pearson chi-square over 20,000 seeded learners; p-value by
        // MathNet's ChiSquared distribution. The seed is fixed, so the outcome is reproducible.
        var model = TinyModels.Random(71, m: 8, teach: 6, test: 1, labels: 2, alpha: 1.0, lapse: 0);
        var shownItems = new[] { 0, 3, 1, 5 };
        var learners = 20_000;
        var counts = new int[model.HypothesisCount];
        for (var i = 0; i < learners; i++)
        {
            var learner = new SimulatedLearner(model, LearnerVariant.Assumed, 1.0, 0, 0.1, new SeededRandom(SeededRandom.Derive(9, (ulong)i)));
            foreach (var x in shownItems)
            {
                learner.SeeFeedback(x);
            }

            counts[learner.Hypothesis]++;
        }

        var posterior = model.Prior.ToArray();
        foreach (var x in shownItems)
        {
            TeachingOrders.ApplyShown(model, posterior, x, model.Q);
        }

        var total = posterior.Sum();
        var chi = 0.0;
        for (var h = 0; h < counts.Length; h++)
        {
            var expected = learners * posterior[h] / total;
            chi += (counts[h] - expected) * (counts[h] - expected) / expected;
        }

        var p = 1 - ChiSquared.CDF(counts.Length - 1, chi);
        Assert.True(p > 0.001, $"chi-square {chi:F2}, p = {p:G3}");

        // The same test must reject a wrong distribution: the prior itself.
        var chiPrior = Enumerable.Range(0, counts.Length).Sum(h => Math.Pow(counts[h] - (learners * model.Prior[h]), 2) / (learners * model.Prior[h]));
        Assert.True(1 - ChiSquared.CDF(counts.Length - 1, chiPrior) < 1e-6);
    }

    private static GateSettings Gate(string mode, int maxItems = 30) => new()
    {
        TargetError = 0.1,
        Confidence = 0.0,
        MaxTeachingItems = 3,
        Retakes = 0,
        Test = new TestSettings { Mode = mode, MaxItems = maxItems, Delta = 0.15, Alpha = 0.05, Beta = 0.1 },
    };

    [Fact]
    public void Perfect_test_answers_release_after_wald_lower_boundary_is_crossed()
    {
        // Wald, "Sequential tests of statistical hypotheses", Ann. Math. Stat. 16, 1945 [pub, REFERENCES.md A]:
        // accept H0 once the log likelihood ratio falls to ln(β/(1−α)). With no errors the LLR after n answers
        // is n·ln((1−p1)/(1−p0)), so the first n with n·ln(0.75/0.9) ≤ ln(0.1/0.95) — computed here directly.
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 40);
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Cover, Gate = Gate(TestModes.Sequential), Seed = 3 });
        while (run.Phase == SessionPhase.Teaching)
        {
            run.Answer(model.TrueLabel(run.CurrentItem));
        }

        var expected = (int)Math.Ceiling(Math.Log(0.1 / 0.95) / Math.Log(0.75 / 0.9));
        var answered = 0;
        while (!run.IsEnded)
        {
            run.Answer(model.TrueLabel(run.CurrentItem));
            answered++;
        }

        Assert.Equal(SessionPhase.Released, run.Phase);
        Assert.Equal(expected, answered);
        Assert.Equal(13, expected);
    }

    [Fact]
    public void Wrong_test_answers_fail_at_the_upper_boundary()
    {
        // Wald 1945: reject H0 once LLR ≥ ln((1−β)/α) = ln(18); each error adds ln(p1/p0) = ln 2.5.
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 40);
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Cover, Gate = Gate(TestModes.Sequential), Seed = 3 });
        while (run.Phase == SessionPhase.Teaching)
        {
            run.Answer(model.TrueLabel(run.CurrentItem));
        }

        var answered = 0;
        while (!run.IsEnded)
        {
            run.Answer(1 - model.TrueLabel(run.CurrentItem));
            answered++;
        }

        Assert.Equal(SessionPhase.Failed, run.Phase);
        Assert.Equal((int)Math.Ceiling(Math.Log(18) / Math.Log(2.5)), answered);
    }

    [Fact]
    public void Fixed_test_uses_every_item_and_the_wilson_bound()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 40);
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Cover, Gate = Gate(TestModes.Fixed, 20), Seed = 4 });
        while (run.Phase == SessionPhase.Teaching)
        {
            run.Answer(model.TrueLabel(run.CurrentItem));
        }

        var answered = 0;
        while (!run.IsEnded)
        {
            // 3 errors in 20: one-sided 95 % Wilson upper bound ≈ 0.32 > 0.25, so the annotator fails.
            run.Answer(answered < 3 ? 1 - model.TrueLabel(run.CurrentItem) : model.TrueLabel(run.CurrentItem));
            answered++;
        }

        Assert.Equal(20, answered);
        Assert.True(ProportionIntervals.WilsonUpper(3, 20, 0.95) > 0.25);
        Assert.Equal(SessionPhase.Failed, run.Phase);
        Assert.Equal(3, run.Evidence().TestErrors);
    }

    [Fact]
    public void Test_order_is_class_stratified_and_never_repeats_an_item()
    {
        var model = TinyModels.Random(81, m: 60, teach: 20, test: 40, labels: 2, alpha: 1.5, lapse: 0.05);
        var gate = Gate(TestModes.Fixed, 20) with { MaxTeachingItems = 1 };
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 5 });
        run.Answer(0);
        var seen = new List<int>();
        while (!run.IsEnded)
        {
            Assert.False(model.IsTeachItem(run.CurrentItem));
            seen.Add(run.CurrentItem);
            run.Answer(model.TrueLabel(run.CurrentItem));
        }

        Assert.Equal(seen.Count, seen.Distinct().Count());
        // Classes take turns: with at least 10 test items in each class, 20 answers split 10/10.
        var available = Enumerable.Range(model.TeachCount, model.TestCount).GroupBy(model.TrueLabel).Min(g => g.Count());
        Assert.True(available >= 10);
        var perClass = seen.GroupBy(model.TrueLabel).Select(g => g.Count()).ToArray();
        Assert.Equal([10, 10], perClass);
    }

    [Fact]
    public void Failed_test_with_a_retake_returns_to_teaching_where_it_stopped()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 40);
        var gate = Gate(TestModes.Sequential) with { Retakes = 1 };
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 6 });
        while (run.Phase == SessionPhase.Teaching)
        {
            run.Answer(model.TrueLabel(run.CurrentItem));
        }

        var taught = run.TaughtCount;
        while (run.Phase == SessionPhase.Testing)
        {
            run.Answer(1 - model.TrueLabel(run.CurrentItem));
        }

        Assert.Equal(SessionPhase.Teaching, run.Phase);
        Assert.Equal(1, run.RetakesUsed);
        Assert.True(model.IsTeachItem(run.CurrentItem));
        run.Answer(model.TrueLabel(run.CurrentItem));
        Assert.Equal(taught + 1, run.TaughtCount);
    }

    [Fact]
    public void Replaying_the_answers_rebuilds_the_same_session()
    {
        var model = TinyModels.Random(91, m: 200, teach: 40, test: 30, labels: 3, alpha: 1.5, lapse: 0.05);
        var options = new SessionOptions { Policy = PolicyNames.Random, Gate = new GateSettings { MaxTeachingItems = 10 }, Seed = 77 };
        var run = SessionRun.Start(model, options);
        var answers = new List<int>();
        var random = new SeededRandom(1);
        while (!run.IsEnded && answers.Count < 30)
        {
            var label = random.NextDouble() < 0.7 ? model.TrueLabel(run.CurrentItem) : random.NextInt(3);
            answers.Add(label);
            run.Answer(label);
        }

        var replay = SessionRun.Replay(model, options, answers);
        Assert.Equal(run.Phase, replay.Phase);
        Assert.Equal(run.Step, replay.Step);
        Assert.Equal(run.CurrentItem, replay.CurrentItem);
        Assert.Equal(run.Belief.ToArray(), replay.Belief.ToArray());
    }
}

public class ModelVersionSerializerTests
{
    [Theory]
    [InlineData(2)]
    [InlineData(3)]
    public void Round_trip_keeps_every_table_and_the_same_sessions(int labels)
    {
        var model = TinyModels.Random(101, m: 150, teach: 30, test: 20, labels, alpha: 1.5, lapse: 0.05);
        var copy = Model.ModelVersionSerializer.FromBytes(Model.ModelVersionSerializer.ToBytes(model));
        Assert.Equal(model.ItemIds, copy.ItemIds);
        Assert.Equal(model.Error.ToArray(), copy.Error.ToArray());
        Assert.Equal(model.Prior.ToArray(), copy.Prior.ToArray());
        Assert.Equal(model.GreedySequence, copy.GreedySequence);
        Assert.Equal(model.Summary.Hypotheses, copy.Summary.Hypotheses);
        for (var x = 0; x < model.ItemCount; x++)
        {
            for (var h = 0; h < model.HypothesisCount; h++)
            {
                Assert.Equal(model.Predict(h, x), copy.Predict(h, x));
            }
        }

        var options = new SessionOptions { Policy = PolicyNames.Adaptive, Seed = 4 };
        var answers = Enumerable.Range(0, 12).Select(i => i % labels).ToArray();
        Assert.Equal(SessionRun.Replay(model, options, answers).Belief.ToArray(), SessionRun.Replay(copy, options, answers).Belief.ToArray());
    }

    [Fact]
    public void Garbage_is_refused_with_a_clear_error()
    {
        var error = Assert.Throws<InvalidDataException>(() => Model.ModelVersionSerializer.FromBytes([1, 2, 3, 4, 5, 6, 7, 8]));
        Assert.Contains("Not a TeachServe model version", error.Message);
    }
}
