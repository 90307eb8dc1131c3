using MathNet.Numerics.Distributions;
using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Statistics;
using TeachServe.Core.Teaching;
using TeachServe.Core.Tests.Support;

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

    private static GateSettings Gate(string mode, int maxItems = 100, int tail = 0) => new()
    {
        TargetError = 0.1,
        Confidence = 0.0,
        MaxTeachingItems = 3,
        Retakes = 0,
        Test = new TestSettings { Mode = mode, MaxItems = maxItems, Delta = 0.15, Alpha = 0.05, Beta = 0.1, TailItems = tail },
    };

    /// <summary>Runs a session's teaching with right answers and returns it at the start of its test.</summary>
    private static SessionRun AtTest(ModelVersion model, GateSettings gate, ulong seed)
    {
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Cover, Gate = gate, Seed = seed });
        while (run.Phase == SessionPhase.Teaching)
        {
            run.Answer(model.TrueLabel(run.CurrentItem));
        }

        return run;
    }

    [Fact]
    public void The_test_works_on_answer_error_with_lapses_mapped_in()
    {
        // An annotator at rule error e with lapse λ over K labels errs on answers with (1 − λ)e + λ(K − 1)/K
        // (DESIGN 2.2, derived): 0.95·0.1 + 0.05·0.5 = 0.12 and 0.95·0.25 + 0.025 = 0.2625.
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 200);
        var run = AtTest(model, Gate(TestModes.Sequential), 3);
        AssertNear.Absolute(0.12, run.Design.Test.P0, 1e-15);
        AssertNear.Absolute(0.2625, run.Design.Test.P1, 1e-15);
        Assert.True(run.Design.Test.AchievedAlpha <= 0.05 && run.Design.Test.AchievedBeta <= 0.1);
    }

    [Fact]
    public void Perfect_test_answers_release_at_the_first_release_point_of_the_design()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 200);
        var run = AtTest(model, Gate(TestModes.Sequential), 3);
        var expected = Enumerable.Range(1, run.Design.Test.MaxItems).First(n => run.Design.Test.ReleaseAtMost[n] >= 0);
        var answered = 0;
        while (!run.IsEnded)
        {
            run.Answer(model.TrueLabel(run.CurrentItem));
            answered++;
        }

        Assert.Equal(SessionPhase.Released, run.Phase);
        Assert.Equal(expected, answered);
        // Wald's approximate bound would stop at ⌈ln(β/(1−α)) / ln((1−p1)/(1−p0))⌉ (Wald 1945 [pub]); the exact design
        // needs at least as many answers, since it must hold beta exactly, truncation included.
        Assert.True(expected >= (int)Math.Ceiling(Math.Log(0.1 / 0.95) / Math.Log((1 - 0.2625) / (1 - 0.12))));
    }

    [Fact]
    public void Wrong_test_answers_fail_at_the_first_failure_point_of_the_design()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 200);
        var run = AtTest(model, Gate(TestModes.Sequential), 3);
        var expected = Enumerable.Range(1, run.Design.Test.MaxItems).First(n => run.Design.Test.FailAtLeast[n] <= n);
        var answered = 0;
        while (!run.IsEnded)
        {
            run.Answer(1 - model.TrueLabel(run.CurrentItem));
            answered++;
        }

        Assert.Equal(SessionPhase.Failed, run.Phase);
        Assert.Equal(expected, answered);
        Assert.Equal(false, run.Attempts.Single().Passed);
    }

    [Fact]
    public void Fixed_test_uses_every_item_and_releases_at_or_below_its_exact_cut()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 200);
        foreach (var (extra, phase) in new[] { (0, SessionPhase.Released), (1, SessionPhase.Failed) })
        {
            var run = AtTest(model, Gate(TestModes.Fixed), 4);
            var n = run.Design.Test.MaxItems;
            var wrong = run.Design.Test.ReleaseAtMost[n] + extra;
            var answered = 0;
            while (!run.IsEnded)
            {
                run.Answer(answered < wrong ? 1 - model.TrueLabel(run.CurrentItem) : model.TrueLabel(run.CurrentItem));
                answered++;
            }

            // The cut is the binomial test's (checked against MathNet in TruncatedSequentialTestTests).
            Assert.Equal(n, answered);
            Assert.Equal(phase, run.Phase);
            Assert.Equal(wrong, run.Evidence().TestErrors);
        }
    }

    [Fact]
    public void Test_order_is_shuffled_whole_so_neighbouring_items_say_nothing_about_labels()
    {
        // Security goal: in a binary project, the share of aligned test pairs (items 1–2, 3–4, …) with different
        // labels is 0.5 ± 0.1 (dealing one item per label per round made it 1.0). Over 40 sessions.
        var model = TinyModels.Random(81, m: 60, teach: 20, test: 120, labels: 2, alpha: 1.5, lapse: 0.05);
        var gate = Gate(TestModes.Fixed, 40) with { MaxTeachingItems = 1, Test = new TestSettings { Mode = TestModes.Fixed, MaxItems = 40, Delta = 0.3, Alpha = 0.1, Beta = 0.1 } };
        int pairs = 0, different = 0;
        for (var session = 0; session < 40; session++)
        {
            var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = (ulong)(500 + session) });
            run.Answer(0);
            var seen = new List<int>();
            var random = new SeededRandom((ulong)session);
            while (!run.IsEnded)
            {
                Assert.False(model.IsTeachItem(run.CurrentItem));
                seen.Add(run.CurrentItem);
                run.Answer(random.NextInt(2));
            }

            Assert.Equal(seen.Count, seen.Distinct().Count());
            for (var i = 0; i + 1 < seen.Count; i += 2)
            {
                pairs++;
                different += model.TrueLabel(seen[i]) != model.TrueLabel(seen[i + 1]) ? 1 : 0;
            }
        }

        Assert.True(pairs >= 400);
        Assert.InRange((double)different / pairs, 0.4, 0.6);
    }

    [Fact]
    public void The_end_of_an_attempt_does_not_point_at_the_answer_that_decided_it()
    {
        // Security goal: for an annotator answering at random, P(wrong | the answer that ended an attempt as a fail)
        // ≤ 0.65 (without the tail of uncounted items every such answer is wrong). 400 sessions, binary project.
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 200);
        int ended = 0, wrongAtEnd = 0, tailAnswers = 0;
        for (var session = 0; session < 400; session++)
        {
            var run = AtTest(model, Gate(TestModes.Sequential, tail: 4), (ulong)(900 + session));
            var random = new SeededRandom((ulong)(7000 + session));
            var lastCorrect = true;
            while (!run.IsEnded)
            {
                var label = random.NextInt(2);
                lastCorrect = label == model.TrueLabel(run.CurrentItem);
                run.Answer(label);
            }

            if (run.Phase == SessionPhase.Failed)
            {
                ended++;
                wrongAtEnd += lastCorrect ? 0 : 1;
            }

            var evidence = run.Evidence();
            tailAnswers += evidence.TestAnswers.Count(a => !a.Counted);
            Assert.Equal(evidence.TestAnswers.Count(a => a.Counted), run.Attempts.Single().CountedAnswered);
        }

        Assert.True(ended >= 300, $"{ended} failed");
        Assert.True((double)wrongAtEnd / ended <= 0.65, $"P(wrong | last) = {(double)wrongAtEnd / ended:F3}");
        // The tail is uniform on 0..4 items: mean 2 per session (common practice: the mean of a discrete uniform).
        Assert.InRange(tailAnswers / 400.0, 1.6, 2.4);
    }

    [Fact]
    public void Every_attempt_gets_a_full_test_of_fresh_items_and_the_evidence_lists_each()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 250);
        var gate = Gate(TestModes.Fixed, 100) with { Retakes = 1 };
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 12 });
        Assert.Null(run.Design.Shortfall);
        var attemptItems = new List<List<int>> { new(), new() };
        while (!run.IsEnded)
        {
            if (run.Phase == SessionPhase.Teaching)
            {
                run.Answer(model.TrueLabel(run.CurrentItem));
                continue;
            }

            attemptItems[run.RetakesUsed].Add(run.CurrentItem);
            // First attempt all wrong, second all right.
            run.Answer(run.RetakesUsed == 0 ? 1 - model.TrueLabel(run.CurrentItem) : model.TrueLabel(run.CurrentItem));
        }

        Assert.Equal(SessionPhase.Released, run.Phase);
        var n = run.Design.Test.MaxItems;
        Assert.All(attemptItems, items => Assert.Equal(n, items.Count));
        Assert.Empty(attemptItems[0].Intersect(attemptItems[1]));
        var evidence = run.Evidence();
        Assert.Equal([(0, n, n, false), (1, n, 0, true)], evidence.Attempts.Select(a => (a.Attempt, a.Answered, a.Errors, a.Passed == true)));
        Assert.Equal(2 * n, evidence.TestAnswered);
        Assert.Equal(n, evidence.TestErrors);
        Assert.Equal(evidence.TestAnswers.Count, evidence.TestAnswered);

        // Beta is spent over both attempts.
        AssertNear.Absolute(0.05, run.Design.AttemptBeta, 1e-15);
        Assert.True(run.Design.Test.AchievedBeta <= 0.05);
    }

    [Fact]
    public void A_retake_on_a_small_pool_reuses_the_least_used_items_and_never_repeats_within_an_attempt()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 50);
        var gate = Gate(TestModes.Fixed) with { Retakes = 1, Test = new TestSettings { Mode = TestModes.Fixed, MaxItems = 40, Delta = 0.3, Alpha = 0.05, Beta = 0.1 } };
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 13 });
        Assert.Null(run.Design.Shortfall);
        Assert.True(2 * run.Design.Test.MaxItems > 50);
        var attemptItems = new List<List<int>> { new(), new() };
        while (!run.IsEnded)
        {
            if (run.Phase == SessionPhase.Teaching)
            {
                run.Answer(model.TrueLabel(run.CurrentItem));
                continue;
            }

            attemptItems[run.RetakesUsed].Add(run.CurrentItem);
            run.Answer(run.RetakesUsed == 0 ? 1 - model.TrueLabel(run.CurrentItem) : model.TrueLabel(run.CurrentItem));
        }

        var n = run.Design.Test.MaxItems;
        Assert.All(attemptItems, items => Assert.Equal(items.Count, items.Distinct().Count()));
        Assert.Equal(n, attemptItems[1].Count);
        // All 50 − n unused items come first, and only the rest is reused.
        var unused = Enumerable.Range(model.TeachCount, model.TestCount).Except(attemptItems[0]).ToHashSet();
        Assert.True(unused.IsSubsetOf(attemptItems[1]));
        Assert.Equal(n - unused.Count, attemptItems[1].Intersect(attemptItems[0]).Count());
    }

    [Fact]
    public void The_figure_shown_to_the_annotator_never_moves_with_test_answers()
    {
        // Security issue: after an all-wrong test the shown predicted error jumped (0.08 → 0.30), telling the
        // annotator their test answers were wrong. The figure comes from teaching answers only.
        var model = TinyModels.Random(41, m: 80, teach: 40, test: 100, labels: 2, alpha: 2, lapse: 0.05);
        var gate = Gate(TestModes.Fixed, 40) with { Retakes = 1, MaxTeachingItems = 3, MasteryStreak = 0 };
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 21 });
        var teachingOnly = new Belief(model, ModelVersion.DisagreementFactor(2), 0.05);
        while (run.Phase == SessionPhase.Teaching)
        {
            var item = run.CurrentItem;
            run.Answer(model.TrueLabel(item));
            teachingOnly.Teach(item, model.TrueLabel(item));
        }

        var before = run.DisplayedPredictedError;
        while (run.Phase == SessionPhase.Testing)
        {
            run.Answer(1 - model.TrueLabel(run.CurrentItem));
            Assert.Equal(before, run.DisplayedPredictedError);
        }

        Assert.Equal(SessionPhase.Teaching, run.Phase);
        Assert.True(run.PredictedError > before + 0.05, "the gate's own belief did take the wrong test answers in");
        var next = run.CurrentItem;
        var outcome = run.Answer(model.TrueLabel(next));
        teachingOnly.Teach(next, model.TrueLabel(next));
        Assert.Equal(teachingOnly.PredictedError(), outcome.PredictedError, 12);
    }

    [Fact]
    public void Belief_mode_releases_a_right_answering_annotator_sooner_and_its_guard_still_fails_a_wrong_one()
    {
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 200);
        var sequential = AtTest(model, Gate(TestModes.Sequential), 3);
        var belief = AtTest(model, Gate(TestModes.Belief), 3);
        int Run(SessionRun run, bool right)
        {
            var answered = 0;
            while (!run.IsEnded)
            {
                var truth = model.TrueLabel(run.CurrentItem);
                run.Answer(right ? truth : 1 - truth);
                answered++;
            }

            return answered;
        }

        var sequentialItems = Run(sequential, right: true);
        var beliefItems = Run(belief, right: true);
        Assert.Equal(SessionPhase.Released, belief.Phase);
        // Never later than the sequential test, which still guards it (the savings are measured in BeliefGateTests).
        Assert.InRange(beliefItems, Math.Min(belief.Options.Gate.Test.MinItems, sequentialItems), sequentialItems);

        var wrong = AtTest(model, Gate(TestModes.Belief), 4);
        var expected = Enumerable.Range(1, wrong.Design.Test.MaxItems).First(n => wrong.Design.Test.FailAtLeast[n] <= n);
        Assert.Equal(expected, Run(wrong, right: false));
        Assert.Equal(SessionPhase.Failed, wrong.Phase);
    }

    [Fact]
    public void Teaching_ends_only_after_the_mastery_streak_and_remediation_draws_representative_items()
    {
        // An annotator the belief thinks done after its first answers keeps being taught while its answers still
        // miss: teaching cannot end before `masteryStreak` right answers in a row.
        var model = TinyModels.Thresholds(60, 30, alpha: 2, lapse: 0.05, testItems: 60);
        var gate = new GateSettings { MaxTeachingItems = 50, Confidence = 0.5, TargetError = 0.2, Retakes = 0, MasteryStreak = 4 };
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 9 });
        var answers = new List<bool>();
        while (run.Phase == SessionPhase.Teaching)
        {
            // Wrong on every third item until 12 items, right afterwards.
            var right = answers.Count >= 12 || answers.Count % 3 != 2;
            var truth = model.TrueLabel(run.CurrentItem);
            run.Answer(right ? truth : 1 - truth);
            answers.Add(right);
        }

        Assert.True(answers.Count >= 16, $"taught {answers.Count}");
        Assert.True(answers.TakeLast(4).All(a => a));

        // Without the streak the same answers end teaching earlier (the belief alone decides).
        var plain = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate with { MasteryStreak = 0 }, Seed = 9 });
        var count = 0;
        while (plain.Phase == SessionPhase.Teaching)
        {
            var truth = model.TrueLabel(plain.CurrentItem);
            plain.Answer(count >= 12 || count % 3 != 2 ? truth : 1 - truth);
            count++;
        }

        Assert.True(count < answers.Count, $"{count} without the streak, {answers.Count} with it");
    }

    [Fact]
    public void Mistakes_the_model_did_not_expect_lengthen_the_streak_needed()
    {
        // Once the belief is satisfied, every further mistake adds `masteryExtension` to the streak needed, at most
        // three times; without the extension the same answers end teaching as soon as the base streak is reached.
        var model = TinyModels.Thresholds(60, 30, alpha: 2, lapse: 0.05, testItems: 60);
        int Taught(int extension)
        {
            var gate = new GateSettings { MaxTeachingItems = 59, Confidence = 0.5, TargetError = 0.2, Retakes = 0, MasteryStreak = 3, MasteryExtension = extension };
            var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 9 });
            var count = 0;
            while (run.Phase == SessionPhase.Teaching)
            {
                // Right, right, wrong, repeated: never three right in a row until item 30, then always right.
                var truth = model.TrueLabel(run.CurrentItem);
                run.Answer(count >= 30 || count % 3 != 2 ? truth : 1 - truth);
                count++;
            }

            return count;
        }

        // Without the extension teaching ends after the first 3 right answers in a row (items 30–32); with it, the
        // many mistakes made while the belief was satisfied raise the streak needed to 3 + 3 × 2 = 9 (items 30–38).
        Assert.Equal(33, Taught(0));
        Assert.Equal(39, Taught(2));
    }

    [Fact]
    public void Remediation_modes_choose_items_differently_and_both_replay()
    {
        var model = TinyModels.Random(31, m: 120, teach: 60, test: 60, labels: 2, alpha: 1.5, lapse: 0.05);
        List<int> Items(string remediation)
        {
            var gate = new GateSettings { MaxTeachingItems = 30, Confidence = 0.01, TargetError = 0.45, Retakes = 0, MasteryStreak = 20, Remediation = remediation };
            var options = new SessionOptions { Policy = PolicyNames.StochasticGreedy, Gate = gate, Seed = 5 };
            var run = SessionRun.Start(model, options);
            var shown = new List<int>();
            var labels = new List<int>();
            var random = new SeededRandom(6);
            while (run.Phase == SessionPhase.Teaching)
            {
                shown.Add(run.CurrentItem);
                var label = random.NextInt(2);
                labels.Add(label);
                run.Answer(label);
            }

            var replay = SessionRun.Replay(model, options, labels);
            Assert.Equal(run.Belief.ToArray(), replay.Belief.ToArray());
            return shown;
        }

        // Stochastic-greedy's order is fixed; remediation with representative items departs from it.
        var policy = Items(RemediationModes.Policy);
        var representative = Items(RemediationModes.Representative);
        Assert.Equal(model.GreedySequence.Take(policy.Count), policy);
        Assert.NotEqual(policy, representative);
    }

    [Fact]
    public void An_annotator_answering_at_random_is_recognised_during_teaching()
    {
        // The hypothesis belief alone is fooled by random answers (they fit every rule alike); the answer sources
        // put the mass on guessing, and teaching stops for them.
        var model = TinyModels.Thresholds(60, 30, alpha: 2, lapse: 0.05, testItems: 60);
        var gate = new GateSettings { MaxTeachingItems = 50, Confidence = 0.999, TargetError = 0.01, Retakes = 0 };
        var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Random, Gate = gate, Seed = 9 });
        var random = new SeededRandom(99);
        while (run.Phase == SessionPhase.Teaching)
        {
            run.Answer(random.NextInt(2));
        }

        Assert.True(run.ChanceWeight >= SessionRun.GuessingStop, $"chance {run.ChanceWeight:F4} model {run.Sources.ModelWeight:F4} after {run.TaughtCount} items");
        Assert.InRange(run.TaughtCount, SessionRun.GuessingMinItems, 49);

        var honest = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Random, Gate = gate, Seed = 9 });
        while (honest.Phase == SessionPhase.Teaching && honest.TaughtCount < 30)
        {
            honest.Answer(model.TrueLabel(honest.CurrentItem));
        }

        Assert.True(honest.ChanceWeight < 0.01);
    }

    [Theory]
    [InlineData(TestModes.Sequential)]
    [InlineData(TestModes.Fixed)]
    public void The_whole_procedure_keeps_its_nominal_rates_over_all_attempts(string mode)
    {
        // Seeded simulation of whole sessions (first test and one retake) for annotators whose answers err at a fixed
        // rate: at target + delta, release over both attempts ≤ beta; at the target, failing both ≤ alpha. Within
        // 4 binomial standard deviations of the nominal rate (common practice for Monte-Carlo checks).
        var model = TinyModels.Thresholds(10, 5, alpha: 2, lapse: 0.05, testItems: 300);
        var gate = Gate(mode, 100) with { Retakes = 1, Test = new TestSettings { Mode = mode, MaxItems = 100, Delta = 0.15, Alpha = 0.05, Beta = 0.1, TailItems = 2 } };
        const int sessions = 1500;
        foreach (var (ruleError, released) in new[] { (0.1, true), (0.25, false) })
        {
            var p = GateDesign.AnswerError(ruleError, 0.05, 2);
            var count = 0;
            for (var i = 0; i < sessions; i++)
            {
                var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Random, Gate = gate, Seed = (ulong)(20_000 + i) });
                var random = new SeededRandom((ulong)(40_000 + i));
                while (!run.IsEnded)
                {
                    var truth = model.TrueLabel(run.CurrentItem);
                    run.Answer(run.Phase == SessionPhase.Teaching || random.NextDouble() >= p ? truth : 1 - truth);
                }

                count += (run.Phase == SessionPhase.Released) == released ? 1 : 0;
            }

            var rate = (double)count / sessions;
            var nominal = released ? 0.95 : 0.90;
            Assert.True(rate >= nominal - (4 * Math.Sqrt(nominal * (1 - nominal) / sessions)), $"{mode}: {(released ? "released" : "failed")} {rate:F3} at rule error {ruleError}");
        }
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

public class TargetPriorTests
{
    [Fact]
    public void A_table_whose_priors_sum_to_one_and_omit_the_target_gives_it_the_weight_of_one_row()
    {
        // Four uploaded rules with priors 0.25 each (summing to 1), none the truth labelling: the target joins with
        // the weight of one row, 0.25, so its prior is 0.25 / 1.25 = 0.2 (derived), not 1 / 2 as with a raw weight 1.
        var items = Enumerable.Range(0, 8).Select(i => new ItemDefinition
        {
            Id = $"i{i}", Pool = i < 6 ? Pools.Teach : Pools.Test, Label = i % 2 == 0 ? "a" : "b", Content = new ItemContent { Text = "x" },
        }).ToList();
        var rows = Enumerable.Range(0, 4).Select(r => new TableHypothesis
        {
            Name = $"r{r}", Prior = 0.25,
            Predictions = new Dictionary<string, string> { [$"i{r}"] = r % 2 == 0 ? "b" : "a" },
        }).ToList();
        var settings = new ProjectSettings
        {
            Name = "table", Labels = ["a", "b"], Family = new FamilySettings { Kind = FamilyKinds.Table, Table = rows },
            Gate = new GateSettings { Test = new TestSettings { Mode = TestModes.Fixed, MaxItems = 2, Delta = 0.6, Alpha = 0.45, Beta = 0.45 }, Retakes = 0 },
        };
        var model = ModelCompiler.Compile(new ProjectDefinition(settings, items));
        Assert.Equal(5, model.HypothesisCount);
        Assert.Equal(0.2, model.Prior[model.TargetIndex], 12);
    }
}

