using MathNet.Numerics;
using MathNet.Numerics.Distributions;
using MathNet.Numerics.Statistics;
using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

/// <summary>REFERENCES.md section D (Welch rows), with the p-value re-derived by integrating the t density.</summary>
public class MeanTestsTests
{
    private static readonly double[] X = [14, 15, 15, 15, 16, 18, 22, 23, 24, 25, 25];
    private static readonly double[] Y = [10, 12, 14, 15, 18, 22, 24, 27, 31, 33, 34, 34, 34];

    // Student 1908 sleep data, as in R's `sleep`.
    private static readonly double[] Sleep1 = [0.7, -1.6, -0.2, -1.2, -0.1, 3.4, 3.7, 0.8, 0.0, 2.0];
    private static readonly double[] Sleep2 = [1.9, 0.8, 1.1, 0.1, -0.1, 4.4, 5.5, 1.6, 4.6, 3.4];

    [Fact]
    public void Welch_matches_R_on_the_first_example()
    {
        // t = −1.5379, df = 18.137, p = 0.1413 — R output [pub]
        var result = MeanTests.WelchT(X, Y);
        AssertNear.Decimals(-1.5379, result.Statistic, 4, "R output [pub]");
        AssertNear.Decimals(18.137, result.DegreesOfFreedom, 3, "R output [pub]");
        AssertNear.Decimals(0.1413, result.PValue, 4, "R output [pub]");
    }

    [Fact]
    public void Welch_matches_R_on_the_sleep_data()
    {
        // sleep data (Student 1908): t = −1.861, df = 17.776, p = 0.07939 — R output [pub]
        var result = MeanTests.WelchT(Sleep1, Sleep2);
        AssertNear.Decimals(-1.861, result.Statistic, 3, "R output [pub]");
        AssertNear.Decimals(17.776, result.DegreesOfFreedom, 3, "R output [pub]");
        AssertNear.Decimals(0.07939, result.PValue, 5, "R output [pub]");
    }

    [Theory]
    [InlineData(0)]
    [InlineData(1)]
    public void Welch_p_value_is_the_integrated_t_tail(int example)
    {
        var (x, y) = example == 0 ? (X, Y) : (Sleep1, Sleep2);
        var result = MeanTests.WelchT(x, y);
        // Welch–Satterthwaite df from MathNet's sample variances, and the two-sided tail by integrating the
        // Student t density (rather than MathNet's incomplete-beta CDF): p = 1 − 2∫₀^|t| f(u) du.
        double vx = x.Variance() / x.Length, vy = y.Variance() / y.Length;
        var df = (vx + vy) * (vx + vy) / ((vx * vx / (x.Length - 1)) + (vy * vy / (y.Length - 1)));
        AssertNear.Relative(df, result.DegreesOfFreedom, 1e-12, "df");
        var central = Integrate.GaussLegendre(u => StudentT.PDF(0, 1, df, u), 0, Math.Abs(result.Statistic), 128);
        AssertNear.Absolute(1 - (2 * central), result.PValue, 1e-12, "p");
    }

    [Fact]
    public void Welch_equals_Student_for_equal_sizes_and_variances()
    {
        // Equal n and equal sample variances: Welch's t is the pooled t and df = 2(n − 1).
        double[] x = [1, 2, 3, 4, 5], y = [3, 4, 5, 6, 7];
        var result = MeanTests.WelchT(x, y);
        var pooledVariance = (x.Variance() + y.Variance()) / 2;
        var studentT = (x.Mean() - y.Mean()) / Math.Sqrt(pooledVariance * (2.0 / 5));
        AssertNear.Absolute(studentT, result.Statistic, 1e-12, "t");
        AssertNear.Absolute(8, result.DegreesOfFreedom, 1e-12, "df");
    }

    [Fact]
    public void Mean_interval_ends_are_where_the_one_sample_test_has_p_equal_to_alpha()
    {
        var ci = MeanTests.MeanTInterval(Sleep1, 0.95);
        AssertNear.Absolute(Sleep1.Mean(), (ci.Low + ci.High) / 2, 1e-12, "centre");
        var se = Sleep1.StandardDeviation() / Math.Sqrt(Sleep1.Length);
        foreach (var end in new[] { ci.Low, ci.High })
        {
            // The one-sample t statistic at each end, and its two-sided p by integrating the t density (df 9).
            var t = Math.Abs(Sleep1.Mean() - end) / se;
            var central = Integrate.GaussLegendre(u => StudentT.PDF(0, 1, 9, u), 0, t, 128);
            AssertNear.Absolute(0.05, 1 - (2 * central), 1e-10, $"p at {end}");
        }
    }

    [Fact]
    public void Too_little_data_gives_NaN()
    {
        Assert.True(double.IsNaN(MeanTests.WelchT([1.0], [1.0, 2.0]).PValue));
        Assert.True(double.IsNaN(MeanTests.WelchT([], []).Statistic));
        Assert.True(double.IsNaN(MeanTests.WelchT([2.0, 2.0], [3.0, 3.0]).PValue), "both samples constant");
        Assert.True(double.IsNaN(MeanTests.WelchT([1.0, double.NaN], [1.0, 2.0]).PValue), "NaN propagates");
        Assert.True(double.IsNaN(MeanTests.MeanTInterval([1.0]).Low));
        Assert.Throws<ArgumentOutOfRangeException>(() => MeanTests.MeanTInterval(Sleep1, 1.5));
    }
}
