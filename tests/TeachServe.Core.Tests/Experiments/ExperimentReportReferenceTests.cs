using MathNet.Numerics.Distributions;
using TeachServe.Core.Experiments;
using TeachServe.Core.Tests.Support;
using static TeachServe.Core.Tests.Experiments.ExperimentSamples;

namespace TeachServe.Core.Tests.Experiments;

/// <summary>Outcome data built to reproduce the counts of a REFERENCES.md row; the report must show the published value.</summary>
public class ExperimentReportReferenceTests
{
    [Fact]
    public void Pooled_test_error_56_of_70_vs_48_of_80()
    {
        // Arm 1: 7 annotators × 10 answers, 56 errors; control: 8 × 10, 48 errors.
        var outcomes = Tested(1, 10, [6, 7, 8, 9, 10, 8, 8], "b").Concat(Tested(0, 10, [4, 5, 6, 7, 8, 6, 6, 6], "a")).ToList();
        var report = ExperimentReport.Compute(Definition(), outcomes);
        var c = Assert.Single(report.Comparisons).TestError;
        Assert.Equal((56, 70, 48, 80), (c.Events, c.Trials, c.ControlEvents, c.ControlTrials));
        AssertNear.Absolute(0.2, c.Difference, 1e-15);
        // 0.0524 – 0.3339: Newcombe, Stat Med 17:873, 1998, Table II, method 10 [via]
        AssertNear.Decimals(0.0524, c.DifferenceInterval.Low, 4, "Newcombe 1998 Table II [via]");
        AssertNear.Decimals(0.3339, c.DifferenceInterval.High, 4, "Newcombe 1998 Table II [via]");
        // z = 2.65: R prop.test / pooled two-proportion z [pub]
        AssertNear.Decimals(2.65, c.ZTest.Statistic, 2, "R output [pub]");
        Assert.False(c.ReadFisher);
    }

    [Fact]
    public void Release_rate_56_of_70_vs_48_of_80_is_the_primary_z_test()
    {
        var outcomes = Finished(1, 70, 56, "b").Concat(Finished(0, 80, 48, "a")).ToList();
        var report = ExperimentReport.Compute(Definition(metric: ExperimentMetrics.ReleaseRate), outcomes);
        var comparison = Assert.Single(report.Comparisons);
        var c = comparison.ReleaseRate;
        AssertNear.Decimals(0.0524, c.DifferenceInterval.Low, 4, "Newcombe 1998 Table II [via]");
        AssertNear.Decimals(0.3339, c.DifferenceInterval.High, 4, "Newcombe 1998 Table II [via]");
        AssertNear.Decimals(2.65, c.ZTest.Statistic, 2, "R output [pub]");
        Assert.Equal(c.ZTest.PValue, comparison.PrimaryPValue);
        Assert.Equal(c.ZTest.PValue, comparison.PrimaryAdjustedPValue); // Holm over one arm changes nothing
        Assert.Equal(c.AlwaysValidPValue, comparison.PrimaryAlwaysValidPValue);
    }

    [Fact]
    public void Release_rate_Wilson_intervals_81_of_263_and_15_of_148()
    {
        var outcomes = Finished(0, 263, 81, "a").Concat(Finished(1, 148, 15, "b")).ToList();
        var arms = ExperimentReport.Compute(Definition(metric: ExperimentMetrics.ReleaseRate), outcomes).Arms;
        // Newcombe, Stat Med 17:857, 1998, Table II [via]
        AssertNear.Decimals(0.2553, arms[0].ReleaseRateInterval.Low, 4, "Newcombe 1998 Table II [via]");
        AssertNear.Decimals(0.3662, arms[0].ReleaseRateInterval.High, 4, "Newcombe 1998 Table II [via]");
        AssertNear.Decimals(0.0624, arms[1].ReleaseRateInterval.Low, 4, "Newcombe 1998 Table II [via]");
        AssertNear.Decimals(0.1605, arms[1].ReleaseRateInterval.High, 4, "Newcombe 1998 Table II [via]");
    }

    [Fact]
    public void Small_cells_use_Fisher_tea_tasting()
    {
        // [[3, 1], [1, 3]]: arm 3 of 4 released, control 1 of 4.
        var outcomes = Finished(1, 4, 3, "b").Concat(Finished(0, 4, 1, "a")).ToList();
        var report = ExperimentReport.Compute(Definition(metric: ExperimentMetrics.ReleaseRate), outcomes);
        var comparison = Assert.Single(report.Comparisons);
        // two-sided 0.4857 (34/70): Fisher 1935; Agresti 2002 p. 91 gives the one-sided 17/70 [derived]
        AssertNear.Absolute(34.0 / 70, comparison.ReleaseRate.FisherPValue, 1e-12, "REFERENCES C tea tasting [derived]");
        // Cross-check with MathNet's hypergeometric law: N = 8, K = 4 released, n = 4 in the arm.
        var pmf = Enumerable.Range(0, 5).Select(k => Hypergeometric.PMF(8, 4, 4, k)).ToArray();
        AssertNear.Absolute(pmf.Where(p => p <= pmf[3] * (1 + 1e-7)).Sum(), comparison.ReleaseRate.FisherPValue, 1e-12, "MathNet Hypergeometric");
        Assert.True(comparison.ReleaseRate.ReadFisher);
        Assert.Equal(comparison.ReleaseRate.FisherPValue, comparison.PrimaryPValue);
        Assert.Contains(report.Warnings, w => w.Contains("Fisher", StringComparison.Ordinal) && w.StartsWith("arm1", StringComparison.Ordinal));
    }

    [Fact]
    public void Sample_ratio_mismatch_600_vs_400()
    {
        var outcomes = Started(0, 600, "a").Concat(Started(1, 400, "b")).ToList();
        var report = ExperimentReport.Compute(Definition(), outcomes);
        // χ² = 40, p = 2.54e−10: standard worked example [pub]
        AssertNear.Absolute(40, report.SampleRatio.Test.Statistic, 1e-12, "standard worked example [pub]");
        AssertNear.SignificantDigits(2.54e-10, report.SampleRatio.Test.PValue, 3, "standard worked example [pub]");
        Assert.True(report.SampleRatio.Mismatch);
        Assert.Contains(report.Warnings, w => w.StartsWith("sample-ratio mismatch", StringComparison.Ordinal));
    }

    [Fact]
    public void No_mismatch_warning_for_a_fair_split()
    {
        var outcomes = Started(0, 510, "a").Concat(Started(1, 490, "b")).ToList();
        var report = ExperimentReport.Compute(Definition(), outcomes);
        Assert.False(report.SampleRatio.Mismatch);
        Assert.Empty(report.Warnings);
        // Planned 3:1 makes the same counts a mismatch: the weights are used, not an even split.
        var skewed = ExperimentReport.Compute(Definition() with { Weights = [3, 1] }, outcomes);
        Assert.True(skewed.SampleRatio.Mismatch);
        AssertNear.Relative(0.75, skewed.Arms[0].PlannedShare, 1e-15);
    }

    [Fact]
    public void Planner_p1_half_p2_three_quarters()
    {
        // Control 25 of 50 released (baseline 0.5, observed), MDE 0.25 → alternative 0.75; the arm has 50 finished.
        var outcomes = Finished(0, 50, 25, "a").Concat(Finished(1, 50, 30, "b")).ToList();
        var definition = Definition(metric: ExperimentMetrics.ReleaseRate, mde: 0.25);
        var report = ExperimentReport.Compute(definition, outcomes, new ExperimentReportOptions { PlannedPower = 0.9 });
        var plan = Assert.IsType<SamplePlan>(report.Plan);
        Assert.Equal((0.5, true, 0.75, "finished annotators"), (plan.Baseline, plan.BaselineObserved, plan.Alternative, plan.Unit));
        // n = 76.7 per group: R power.prop.test(p1 = 0.5, p2 = 0.75, power = 0.9) documentation [pub]
        AssertNear.Decimals(76.7, plan.RequiredPerArm, 1, "R power.prop.test [pub]");
        // power 0.740 at n = 50: same documentation [pub]
        AssertNear.Decimals(0.740, Assert.Single(report.Comparisons).CurrentPower, 3, "R power.prop.test [pub]");
    }

    [Fact]
    public void Welch_t_on_per_annotator_test_error()
    {
        // x and y of REFERENCES D as errors out of 100 answers: t, df and p do not change under scaling.
        int[] x = [14, 15, 15, 15, 16, 18, 22, 23, 24, 25, 25];
        int[] y = [10, 12, 14, 15, 18, 22, 24, 27, 31, 33, 34, 34, 34];
        var outcomes = Tested(1, 100, x, "x").Concat(Tested(0, 100, y, "y")).ToList();
        var comparison = Assert.Single(ExperimentReport.Compute(Definition(), outcomes).Comparisons);
        // t = −1.5379, df = 18.137, p = 0.1413: R t.test output [pub]
        AssertNear.Decimals(-1.5379, comparison.TestErrorWelch.Statistic, 4, "R output [pub]");
        AssertNear.Decimals(18.137, comparison.TestErrorWelch.DegreesOfFreedom, 3, "R output [pub]");
        AssertNear.Decimals(0.1413, comparison.TestErrorWelch.PValue, 4, "R output [pub]");
        Assert.Equal(comparison.TestErrorWelch.PValue, comparison.PrimaryPValue);
    }

    [Fact]
    public void Welch_t_on_the_sleep_data_shifted_into_error_rates()
    {
        // Student 1908 sleep data: error = (g + 2)/10, i.e. (g + 2)·10 errors of 100 answers; a shift and a scale leave t alone.
        double[] g1 = [0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0];
        double[] g2 = [1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4];
        static int[] Errors(double[] g) => [.. g.Select(v => (int)Math.Round((v + 2) * 10))];
        var outcomes = Tested(1, 100, Errors(g1), "g1").Concat(Tested(0, 100, Errors(g2), "g2")).ToList();
        var welch = Assert.Single(ExperimentReport.Compute(Definition(), outcomes).Comparisons).TestErrorWelch;
        // t = −1.861, df = 17.776, p = 0.07939: R t.test(extra ~ group, data = sleep) [pub]
        AssertNear.Decimals(-1.861, welch.Statistic, 3, "R output [pub]");
        AssertNear.Decimals(17.776, welch.DegreesOfFreedom, 3, "R output [pub]");
        AssertNear.SignificantDigits(0.07939, welch.PValue, 4, "R output [pub]");
    }
}
