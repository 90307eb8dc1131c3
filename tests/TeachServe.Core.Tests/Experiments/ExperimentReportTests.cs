using MathNet.Numerics.Distributions;
using MathNet.Numerics.Statistics;
using TeachServe.Core.Experiments;
using TeachServe.Core.Tests.Support;
using static TeachServe.Core.Tests.Experiments.ExperimentSamples;

namespace TeachServe.Core.Tests.Experiments;

/// <summary>Report numbers against an independent recomputation from the counts (direct formulas, MathNet distributions).</summary>
public class ExperimentReportTests
{
    private static readonly double Z = Normal.InvCDF(0, 1, 0.975);

    /// <summary>A hand-built three-arm dataset with released, failed and unfinished annotators.</summary>
    private static List<AnnotatorOutcome> Mixed()
    {
        AnnotatorOutcome O(int arm, string id, bool finished, bool released, int answered, int errors, int items, double? minutes) =>
            new(arm, id, Start, finished, released, answered, errors, items, minutes is { } m ? TimeSpan.FromMinutes(m) : null, 0.1);
        return
        [
            O(0, "a1", true, true, 20, 2, 14, 12), O(0, "a2", true, true, 20, 3, 18, 15), O(0, "a3", true, false, 20, 9, 40, null),
            O(0, "a4", true, true, 15, 1, 10, 9), O(0, "a5", true, false, 30, 12, 40, null), O(0, "a6", false, false, 4, 1, 22, null),
            O(0, "a7", true, true, 20, 2, 20, null),
            O(1, "b1", true, true, 20, 1, 8, 6), O(1, "b2", true, true, 20, 0, 9, 7), O(1, "b3", true, true, 20, 2, 12, 10),
            O(1, "b4", true, false, 25, 8, 30, null), O(1, "b5", true, true, 20, 1, 7, 5), O(1, "b6", false, false, 0, 0, 5, null),
            O(2, "c1", true, false, 20, 7, 40, null), O(2, "c2", true, true, 20, 3, 25, 20), O(2, "c3", false, false, 10, 2, 30, null),
            O(2, "c4", true, false, 30, 11, 40, null), O(2, "c5", true, true, 20, 4, 33, 31),
        ];
    }

    [Fact]
    public void Items_and_cost_per_release_count_every_ended_annotator_of_the_arm()
    {
        // Arm 1 by hand: ended b1–b5 (b6 has not ended); items 28 + 29 + 32 + 55 + 27 = 171 (teaching + test);
        // test items 105, teaching 66; 4 releases. Priced 0.1 per teaching item, 0.2 per test item, 0.6 per minute at
        // 30 s per item: 6.6 + 21 + 171 × 0.5 × 0.6 = 78.9, per release 19.725 (derived).
        var cost = new TeachServe.Core.Projects.CostSettings { PerTeachingItem = 0.1, PerTestItem = 0.2, PerMinute = 0.6, SecondsPerItem = 30 };
        var report = ExperimentReport.Compute(Definition(3), Mixed(), new ExperimentReportOptions { Cost = cost });
        var arm = report.Arms[1];
        AssertNear.Absolute(171.0 / 4, arm.ItemsPerRelease, 1e-12);
        AssertNear.Absolute(78.9 / 4, arm.CostPerRelease, 1e-12);
        var none = ExperimentReport.Compute(Definition(2), [.. Finished(0, 3, 0, "x"), .. Finished(1, 2, 1, "y")]);
        Assert.True(double.IsNaN(none.Arms[0].CostPerRelease));
    }

    [Fact]
    public void Arm_summaries_match_a_direct_recomputation()
    {
        var outcomes = Mixed();
        var report = ExperimentReport.Compute(Definition(3), outcomes);
        for (var arm = 0; arm < 3; arm++)
        {
            var mine = outcomes.Where(o => o.Arm == arm).ToList();
            var s = report.Arms[arm];
            var finished = mine.Where(o => o.Finished).ToList();
            var released = mine.Where(o => o.Released).ToList();
            var tested = finished.Where(o => o.TestAnswered > 0).ToList();
            Assert.Equal((mine.Count, finished.Count, released.Count, tested.Count), (s.Started, s.Finished, s.Released, s.Tested));

            var errors = tested.Select(o => (double)o.TestErrors / o.TestAnswered).ToArray();
            var half = StudentT.InvCDF(0, 1, errors.Length - 1, 0.975) * errors.StandardDeviation() / Math.Sqrt(errors.Length);
            AssertNear.Relative(errors.Mean(), s.MeanTestError, 1e-12);
            AssertNear.Absolute(errors.Mean() - half, s.MeanTestErrorInterval.Low, 1e-12);
            AssertNear.Absolute(errors.Mean() + half, s.MeanTestErrorInterval.High, 1e-12);

            int x = tested.Sum(o => o.TestErrors), n = tested.Sum(o => o.TestAnswered);
            Assert.Equal((x, n), (s.TestErrors, s.TestAnswers));
            AssertNear.Relative((double)x / n, s.PooledTestError, 1e-15);
            AssertInterval(Wilson(x, n), s.PooledTestErrorInterval, 1e-12);
            AssertNear.Relative((double)released.Count / finished.Count, s.ReleaseRate, 1e-15);
            AssertInterval(Wilson(released.Count, finished.Count), s.ReleaseRateInterval, 1e-12);
        }

        // Medians by hand: arm 0 released items 14, 18, 10, 20 → 16; times 12, 15, 9 (a7 unknown) → 12 min.
        Assert.Equal(16, report.Arms[0].MedianItemsToRelease);
        Assert.Equal(TimeSpan.FromMinutes(12), report.Arms[0].MedianTimeToRelease);
        // Arm 1: items 8, 9, 12, 7 → 8.5; times 6, 7, 10, 5 → 6.5 min. Arm 2: items 25, 33 → 29; times 20, 31 → 25.5 min.
        Assert.Equal(8.5, report.Arms[1].MedianItemsToRelease);
        Assert.Equal(TimeSpan.FromMinutes(6.5), report.Arms[1].MedianTimeToRelease);
        Assert.Equal(29, report.Arms[2].MedianItemsToRelease);
        Assert.Equal(TimeSpan.FromMinutes(25.5), report.Arms[2].MedianTimeToRelease);
    }

    [Fact]
    public void Comparisons_match_a_direct_recomputation()
    {
        var outcomes = Mixed();
        var definition = Definition(3, mde: 0.08);
        var report = ExperimentReport.Compute(definition, outcomes);
        Assert.Equal([1, 2], report.Comparisons.Select(c => c.Arm));
        var control = report.Arms[0];
        foreach (var c in report.Comparisons)
        {
            var arm = report.Arms[c.Arm];
            CheckProportions(c.TestError, arm.TestErrors, arm.TestAnswers, control.TestErrors, control.TestAnswers, 0.08 * 0.08);
            CheckProportions(c.ReleaseRate, arm.Released, arm.Finished, control.Released, control.Finished, 0.08 * 0.08);

            var x = TestErrors(outcomes, c.Arm);
            var y = TestErrors(outcomes, 0);
            double vx = x.Variance() / x.Length, vy = y.Variance() / y.Length;
            var t = (x.Mean() - y.Mean()) / Math.Sqrt(vx + vy);
            var df = (vx + vy) * (vx + vy) / ((vx * vx / (x.Length - 1)) + (vy * vy / (y.Length - 1)));
            AssertNear.Relative(t, c.TestErrorWelch.Statistic, 1e-12);
            AssertNear.Relative(df, c.TestErrorWelch.DegreesOfFreedom, 1e-12);
            AssertNear.Relative(2 * StudentT.CDF(0, 1, df, -Math.Abs(t)), c.TestErrorWelch.PValue, 1e-9);
            AssertNear.Relative(x.Mean() - y.Mean(), c.MeanTestErrorDifference, 1e-12);
            Assert.Equal(c.TestErrorWelch.PValue, c.PrimaryPValue); // test-error: the annotator is the unit
            Assert.Equal(c.TestError.AlwaysValidPValue, c.PrimaryAlwaysValidPValue);
        }

        // Holm 1979 step-down over the two arms [derived]: the smaller p times 2, the larger times 1, kept monotone.
        double p1 = report.Comparisons[0].PrimaryPValue, p2 = report.Comparisons[1].PrimaryPValue;
        var (lo, hi) = p1 <= p2 ? (0, 1) : (1, 0);
        var adjustedLow = Math.Min(1, 2 * Math.Min(p1, p2));
        AssertNear.Relative(adjustedLow, report.Comparisons[lo].PrimaryAdjustedPValue, 1e-15, "Holm 1979 [derived]");
        AssertNear.Relative(Math.Max(adjustedLow, Math.Max(p1, p2)), report.Comparisons[hi].PrimaryAdjustedPValue, 1e-15, "Holm 1979 [derived]");
    }

    [Fact]
    public void Holm_across_five_arms_with_one_untestable()
    {
        // Control 40 of 100 released; arms 1–4 with rising release counts, arm 5 without any finished annotator.
        var outcomes = Finished(0, 100, 40, "c").ToList();
        int[] released = [52, 45, 60, 41];
        for (var i = 0; i < released.Length; i++)
            outcomes.AddRange(Finished(i + 1, 100, released[i], $"t{i}"));
        outcomes.AddRange(Started(5, 3, "u"));
        var report = ExperimentReport.Compute(Definition(6, ExperimentMetrics.ReleaseRate), outcomes);

        var raw = report.Comparisons.Select(c => c.PrimaryPValue).ToArray();
        Assert.True(double.IsNaN(raw[4]));
        Assert.Equal(raw[..4], report.Comparisons.Take(4).Select(c => c.ReleaseRate.ZTest.PValue));
        // Holm 1979 [derived], written out independently: m = 4 tests (the NaN is no test), sorted ascending,
        // p̃(i) = max_{j ≤ i} min(1, (m − j + 1)·p(j)).
        var order = Enumerable.Range(0, 4).OrderBy(i => raw[i]).ToArray();
        var expected = new double[4];
        var running = 0.0;
        for (var rank = 0; rank < 4; rank++)
        {
            running = Math.Max(running, Math.Min(1, (4 - rank) * raw[order[rank]]));
            expected[order[rank]] = running;
        }

        for (var i = 0; i < 4; i++)
            AssertNear.Relative(expected[i], report.Comparisons[i].PrimaryAdjustedPValue, 1e-15, "Holm 1979 [derived]");
        Assert.True(double.IsNaN(report.Comparisons[4].PrimaryAdjustedPValue));
        // Holm is uniformly more conservative than the raw p and never above 1.
        Assert.All(report.Comparisons.Take(4), c => Assert.InRange(c.PrimaryAdjustedPValue, c.PrimaryPValue, 1));
    }

    [Fact]
    public void A_named_control_arm_is_compared_against()
    {
        var outcomes = Finished(0, 70, 56, "a").Concat(Finished(1, 80, 48, "b")).Concat(Finished(2, 80, 48, "c")).ToList();
        var report = ExperimentReport.Compute(Definition(3, ExperimentMetrics.ReleaseRate) with { ControlArm = "arm1" }, outcomes);
        Assert.Equal(1, report.ControlArm);
        Assert.Equal([0, 2], report.Comparisons.Select(c => c.Arm));
        AssertNear.Absolute(0.2, report.Comparisons[0].ReleaseRate.Difference, 1e-15); // arm − control
        AssertNear.Absolute(0, report.Comparisons[1].ReleaseRate.Difference, 1e-15);
    }

    [Fact]
    public void Planner_defaults_and_directions()
    {
        // No data: baseline 0.5 (not observed); test error improves downwards.
        var empty = ExperimentReport.Compute(Definition(mde: 0.1), []);
        var plan = Assert.IsType<SamplePlan>(empty.Plan);
        Assert.Equal(("test answers", 0.5, false, 0.4, 0.8, 0.05), (plan.Unit, plan.Baseline, plan.BaselineObserved, plan.Alternative, plan.Power, plan.Alpha));
        AssertNear.Relative(ClosedFormN(0.5, 0.4, 0.8), plan.RequiredPerArm, 1e-12, "closed form of power.prop.test");
        // With no answers yet the power is the formula's value at n = 0 (about α/2), not NaN.
        AssertNear.Relative(ClosedFormPower(0, 0.5, 0.4), Assert.Single(empty.Comparisons).CurrentPower, 1e-12, "closed form of power.prop.test");
        // Release rate 0.95 observed: + MDE leaves (0, 1), so the plan looks downwards instead.
        var high = ExperimentReport.Compute(Definition(metric: ExperimentMetrics.ReleaseRate, mde: 0.1), [.. Finished(0, 20, 19, "a")]);
        Assert.Equal((0.95, true), (high.Plan!.Baseline, high.Plan.BaselineObserved));
        AssertNear.Absolute(0.85, high.Plan.Alternative, 1e-15);
        // All released (rate 1) cannot be planned from: the 0.5 default is used.
        var all = ExperimentReport.Compute(Definition(metric: ExperimentMetrics.ReleaseRate), [.. Finished(0, 20, 20, "a")]);
        Assert.Equal((0.5, false, 0.6), (all.Plan!.Baseline, all.Plan.BaselineObserved, all.Plan.Alternative));
        // Items to release is not a proportion: no plan, no power, no always-valid p.
        var items = ExperimentReport.Compute(Definition(3, ExperimentMetrics.ItemsToRelease), Mixed());
        Assert.Null(items.Plan);
        Assert.All(items.Comparisons, c => Assert.True(double.IsNaN(c.CurrentPower) && double.IsNaN(c.PrimaryAlwaysValidPValue)));
        Assert.All(items.Comparisons, c => Assert.Equal(c.ItemsToReleaseWelch.PValue, c.PrimaryPValue));
    }

    [Fact]
    public void Current_power_uses_the_smaller_arm()
    {
        var outcomes = Finished(0, 200, 100, "a").Concat(Finished(1, 60, 30, "b")).ToList();
        var report = ExperimentReport.Compute(Definition(metric: ExperimentMetrics.ReleaseRate, mde: 0.2), outcomes);
        AssertNear.Relative(ClosedFormPower(60, 0.5, 0.7), Assert.Single(report.Comparisons).CurrentPower, 1e-12, "closed form of power.prop.test");
    }

    [Fact]
    public void Empty_experiment_gives_NaN_and_empty_fields_not_exceptions()
    {
        var report = ExperimentReport.Compute(Definition(3), []);
        Assert.Equal(3, report.Arms.Count);
        foreach (var s in report.Arms)
        {
            Assert.Equal((0, 0, 0, 0, 0, 0), (s.Started, s.Finished, s.Released, s.Tested, s.TestAnswers, s.TestErrors));
            Assert.True(double.IsNaN(s.MeanTestError) && double.IsNaN(s.PooledTestError) && double.IsNaN(s.ReleaseRate) && double.IsNaN(s.MedianItemsToRelease));
            Assert.True(double.IsNaN(s.MeanTestErrorInterval.Low) && double.IsNaN(s.MeanTestErrorInterval.High));
            Assert.Equal((0.0, 1.0), (s.PooledTestErrorInterval.Low, s.PooledTestErrorInterval.High));
            Assert.Equal((0.0, 1.0), (s.ReleaseRateInterval.Low, s.ReleaseRateInterval.High));
            Assert.Null(s.MedianTimeToRelease);
            Assert.Empty(s.LearningCurve);
            Assert.Equal(20, s.TestErrorHistogram.Count);
            Assert.All(s.TestErrorHistogram, b => Assert.Equal(0, b.Count));
        }

        Assert.True(double.IsNaN(report.SampleRatio.Test.Statistic) && double.IsNaN(report.SampleRatio.Test.PValue));
        Assert.False(report.SampleRatio.Mismatch);
        Assert.Empty(report.Warnings);
        foreach (var c in report.Comparisons)
            AssertUntestable(c);
    }

    [Fact]
    public void One_sided_arms_give_NaN_comparisons()
    {
        // The control has everything; arm 1 only unfinished sessions, arm 2 one tested annotator (no variance).
        var outcomes = Mixed().Where(o => o.Arm == 0).Concat(Started(1, 4, "u"))
            .Append(new AnnotatorOutcome(2, "solo", Start, true, true, 20, 2, 11, TimeSpan.FromMinutes(3), 0.05)).ToList();
        var report = ExperimentReport.Compute(Definition(3), outcomes);
        AssertUntestable(report.Comparisons[0]);
        var solo = report.Comparisons[1];
        Assert.True(double.IsNaN(solo.TestErrorWelch.PValue) && double.IsNaN(solo.ItemsToReleaseWelch.PValue) && double.IsNaN(solo.PrimaryPValue));
        Assert.False(double.IsNaN(solo.TestError.ZTest.PValue)); // the pooled answers still compare
        Assert.Equal(0.1, report.Arms[2].MeanTestError);
        Assert.True(double.IsNaN(report.Arms[2].MeanTestErrorInterval.Low));
        Assert.Equal(4, report.Arms[1].Started);
        Assert.True(double.IsNaN(report.Arms[1].ReleaseRate));
    }

    [Fact]
    public void A_test_under_way_is_not_counted()
    {
        var outcomes = new List<AnnotatorOutcome>
        {
            new(0, "done", Start, true, false, 20, 4, 10, null, 0.2),
            new(0, "testing", Start, false, false, 3, 3, 10, null, 0.2),
            new(0, "released-flag-only", Start, false, true, 10, 0, 10, null, 0.05), // released implies finished
        };
        var s = ExperimentReport.Compute(Definition(), outcomes).Arms[0];
        Assert.Equal((2, 2, 30, 4), (s.Finished, s.Tested, s.TestAnswers, s.TestErrors));
    }

    [Fact]
    public void Learning_curve_carries_finished_annotators_forward()
    {
        var outcomes = new List<AnnotatorOutcome>
        {
            Curve("a", true, [0.5, 0.3, 0.2]),
            Curve("b", true, [0.5, 0.4]),
            Curve("c", false, [0.7, 0.6]),          // still being taught: drops out after step 1
            Curve("d", true, [0.6, 0.5, 0.4, 0.35]),
            new(0, "none", Start, true, false, 0, 0, 0, null, 0.5),
        };
        var curve = ExperimentReport.Compute(Definition(), outcomes).Arms[0].LearningCurve;
        double[][] expectedValues = [[0.5, 0.5, 0.7, 0.6], [0.3, 0.4, 0.6, 0.5], [0.2, 0.4, 0.4], [0.2, 0.4, 0.35]];
        Assert.Equal(4, curve.Count);
        for (var step = 0; step < 4; step++)
        {
            var v = expectedValues[step];
            var half = Z * v.StandardDeviation() / Math.Sqrt(v.Length);
            Assert.Equal((step, v.Length), (curve[step].Step, curve[step].Annotators));
            AssertNear.Relative(v.Mean(), curve[step].MeanPredictedError, 1e-12);
            AssertNear.Absolute(v.Mean() - half, curve[step].Low, 1e-12);
            AssertNear.Absolute(v.Mean() + half, curve[step].High, 1e-12);
        }

        // A single annotator has a mean but no band.
        var single = ExperimentReport.Compute(Definition(), [Curve("a", true, [0.5, 0.3])]).Arms[0].LearningCurve;
        Assert.Equal(0.3, single[1].MeanPredictedError);
        Assert.True(double.IsNaN(single[1].Low) && double.IsNaN(single[1].High));
    }

    [Fact]
    public void Histogram_bins_are_width_0_05_and_bin_exact_fractions_correctly()
    {
        // 3/20 = 0.15 is 2.9999… bins of 0.05 in floating point; it belongs to [0.15, 0.20).
        (int Errors, int Answered)[] tests = [(0, 20), (1, 20), (3, 20), (3, 20), (19, 20), (20, 20), (1, 3), (2, 40)];
        var outcomes = tests.Select((t, i) => new AnnotatorOutcome(0, $"w{i}", Start, true, false, t.Answered, t.Errors, 5, null, 0.1)).ToList();
        var bins = ExperimentReport.Compute(Definition(), outcomes).Arms[0].TestErrorHistogram;
        Assert.Equal(20, bins.Count);
        for (var k = 0; k < 20; k++)
        {
            AssertNear.Absolute(k * 0.05, bins[k].Low, 1e-15);
            AssertNear.Absolute((k + 1) * 0.05, bins[k].High, 1e-15);
        }

        var counts = new int[20];
        counts[0] = 1;  // 0
        counts[1] = 2;  // 0.05, 2/40 = 0.05
        counts[3] = 2;  // 0.15 twice
        counts[6] = 1;  // 1/3
        counts[19] = 2; // 0.95 and 1 (the last bin is closed)
        Assert.Equal(counts, bins.Select(b => b.Count));
    }

    [Fact]
    public void Invalid_input_is_rejected()
    {
        Assert.Throws<ArgumentException>(() => ExperimentReport.Compute(Definition(1), []));
        var bad = new AnnotatorOutcome(2, "w", Start, true, false, 1, 0, 0, null, 0);
        Assert.Throws<ArgumentException>(() => ExperimentReport.Compute(Definition(), [bad]));
        Assert.Throws<ArgumentException>(() => ExperimentReport.Compute(Definition(), [bad with { Arm = 0, TestErrors = 2 }]));
        Assert.Throws<ArgumentException>(() => ExperimentReport.Compute(Definition(), [bad with { Arm = 0, TeachingItems = -1 }]));
        Assert.Throws<ArgumentException>(() => ExperimentReport.Compute(Definition(), [], new ExperimentReportOptions { PlannedPower = 1 }));
    }

    private static AnnotatorOutcome Curve(string id, bool finished, double[] curve) =>
        new(0, id, Start, finished, false, 0, 0, curve.Length - 1, null, curve[^1], curve);

    private static void AssertUntestable(ArmComparison c)
    {
        foreach (var p in new[] { c.TestError, c.ReleaseRate })
        {
            Assert.True(double.IsNaN(p.Difference) && double.IsNaN(p.ZTest.PValue) && double.IsNaN(p.FisherPValue));
            Assert.Equal((-1.0, 1.0), (p.DifferenceInterval.Low, p.DifferenceInterval.High));
            Assert.Equal(1.0, p.AlwaysValidPValue);
        }

        Assert.True(double.IsNaN(c.TestErrorWelch.PValue) && double.IsNaN(c.MeanTestErrorDifference));
        Assert.True(double.IsNaN(c.PrimaryPValue) && double.IsNaN(c.PrimaryAdjustedPValue));
    }

    private static double[] TestErrors(List<AnnotatorOutcome> outcomes, int arm) =>
        [.. outcomes.Where(o => o.Arm == arm && o.Finished && o.TestAnswered > 0).Select(o => (double)o.TestErrors / o.TestAnswered)];

    private static void CheckProportions(ProportionComparison c, int x1, int n1, int x2, int n2, double tau2)
    {
        Assert.Equal((x1, n1, x2, n2), (c.Events, c.Trials, c.ControlEvents, c.ControlTrials));
        double p1 = (double)x1 / n1, p2 = (double)x2 / n2;
        AssertNear.Absolute(p1 - p2, c.Difference, 1e-15);

        // Newcombe 1998 method 10 from the Wilson limits of each arm.
        var (l1, u1) = Wilson(x1, n1);
        var (l2, u2) = Wilson(x2, n2);
        AssertNear.Absolute(p1 - p2 - Math.Sqrt(((p1 - l1) * (p1 - l1)) + ((u2 - p2) * (u2 - p2))), c.DifferenceInterval.Low, 1e-12);
        AssertNear.Absolute(p1 - p2 + Math.Sqrt(((u1 - p1) * (u1 - p1)) + ((p2 - l2) * (p2 - l2))), c.DifferenceInterval.High, 1e-12);

        var pooled = (double)(x1 + x2) / (n1 + n2);
        var z = (p1 - p2) / Math.Sqrt(pooled * (1 - pooled) * ((1.0 / n1) + (1.0 / n2)));
        AssertNear.Relative(z, c.ZTest.Statistic, 1e-12);
        AssertNear.Relative(2 * Normal.CDF(0, 1, -Math.Abs(z)), c.ZTest.PValue, 1e-9);

        // Fisher two-sided from MathNet's hypergeometric law of the arm's event count given the margins.
        int population = n1 + n2, events = x1 + x2;
        var lowK = Math.Max(0, n1 + events - population);
        var pmf = Enumerable.Range(lowK, Math.Min(events, n1) - lowK + 1).Select(k => (k, p: Hypergeometric.PMF(population, events, n1, k))).ToArray();
        var observed = pmf.Single(t => t.k == x1).p;
        AssertNear.Relative(Math.Min(1, pmf.Where(t => t.p <= observed * (1 + 1e-7)).Sum(t => t.p)), c.FisherPValue, 1e-9);
        Assert.Equal(new[] { x1, n1 - x1, x2, n2 - x2 }.Min() < 5, c.ReadFisher);

        // Mixture SPRT with the plug-in variance (Johari, Pekelis & Walsh 2017), one look.
        var v = (p1 * (1 - p1) / n1) + (p2 * (1 - p2) / n2);
        var lambda = Math.Sqrt(v / (v + tau2)) * Math.Exp(tau2 * (p1 - p2) * (p1 - p2) / (2 * v * (v + tau2)));
        AssertNear.Relative(Math.Min(1, 1 / lambda), c.AlwaysValidPValue, 1e-9);
    }

    /// <summary>Wilson 1927 interval in the form of Newcombe 1998, method 3.</summary>
    private static (double Low, double High) Wilson(int x, int n)
    {
        var centre = (x + (Z * Z / 2)) / (n + (Z * Z));
        var half = Z / (n + (Z * Z)) * Math.Sqrt((x * (n - x) / (double)n) + (Z * Z / 4));
        return (Math.Max(0, centre - half), Math.Min(1, centre + half));
    }

    private static void AssertInterval((double Low, double High) expected, TeachServe.Core.Statistics.Interval actual, double tolerance)
    {
        AssertNear.Absolute(expected.Low, actual.Low, tolerance);
        AssertNear.Absolute(expected.High, actual.High, tolerance);
    }

    private static double ClosedFormN(double p1, double p2, double power)
    {
        var pbar = (p1 + p2) / 2;
        var root = ((Z * Math.Sqrt(2 * pbar * (1 - pbar))) + (Normal.InvCDF(0, 1, power) * Math.Sqrt((p1 * (1 - p1)) + (p2 * (1 - p2))))) / Math.Abs(p1 - p2);
        return root * root;
    }

    private static double ClosedFormPower(double n, double p1, double p2)
    {
        var pbar = (p1 + p2) / 2;
        return Normal.CDF(0, 1, ((Math.Sqrt(n) * Math.Abs(p1 - p2)) - (Z * Math.Sqrt(2 * pbar * (1 - pbar)))) / Math.Sqrt((p1 * (1 - p1)) + (p2 * (1 - p2))));
    }
}
