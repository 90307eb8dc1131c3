using MathNet.Numerics.Distributions;
using MathNet.Numerics.RootFinding;
using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

/// <summary>REFERENCES.md section B, plus cross-checks of the closed forms against MathNet.</summary>
public class ProportionIntervalsTests
{
    // REFERENCES.md convention: 95 % two-sided, z = 1.959964.
    private const double Z95 = 1.959964;

    [Theory]
    [InlineData(81, 263, 0.2553, 0.3662, 4, "Newcombe, Stat Med 17:857, 1998, Table II [via]")]
    [InlineData(15, 148, 0.0624, 0.1605, 4, "Newcombe 1998 Table II [via]")]
    [InlineData(36, 154, 0.17390, 0.30659, 5, "CAMIS project worked example [pub]")]
    public void Wilson_matches_published_intervals(int x, int n, double low, double high, int decimals, string source)
    {
        var ci = ProportionIntervals.Wilson(x, n);
        AssertNear.Decimals(low, ci.Low, decimals, source);
        AssertNear.Decimals(high, ci.High, decimals, source);
    }

    [Fact]
    public void Wilson_upper_end_at_zero_successes_is_the_closed_form()
    {
        // 0/20, Wilson upper 0.16112 (= z²/(n+z²)) — closed form [derived].
        const double published = 0.16112;
        var closedForm = Z95 * Z95 / (20 + (Z95 * Z95));
        // Second, independent method: the end of the Wilson interval is where the score statistic
        // |x − np|/√(np(1−p)) equals z, found by root finding on MathNet's normal quantile.
        var z = Normal.InvCDF(0, 1, 0.975);
        var byRoot = Brent.FindRoot(p => (20 * p / Math.Sqrt(20 * p * (1 - p))) - z, 1e-6, 0.9, 1e-13);
        AssertNear.Absolute(closedForm, byRoot, 1e-7, "closed form vs score-equation root");
        // z²/(n+z²) = 0.1611252, so the row's 0.16112 is that value cut (not rounded) to five decimals:
        // check it as a truncation, to within one unit of the last digit from below.
        Assert.InRange(closedForm, published, published + 1e-5);

        var ci = ProportionIntervals.Wilson(0, 20);
        Assert.Equal(0.0, ci.Low);
        AssertNear.Absolute(byRoot, ci.High, 1e-10, "Wilson(0, 20).High");
        // The two-sided 95 % upper end is the one-sided 97.5 % bound.
        AssertNear.Absolute(byRoot, ProportionIntervals.WilsonUpper(0, 20, 0.975), 1e-10, "WilsonUpper(0, 20, 0.975)");
    }

    [Theory]
    [InlineData(7, 50, 0.0581917, 0.2673960, 7, "SciPy 1.7 documentation example [pub]")]
    [InlineData(5, 10, 0.187086, 0.812914, 6, "R output in a published package test snapshot [pub]")]
    [InlineData(0, 32, 0.0, 0.1088812, 7, "R output in a published package test snapshot [pub]")]
    [InlineData(5, 25, 0.068, 0.407, 3, "Conover, Practical Nonparametric Statistics, 1999 tables [via]")]
    public void Clopper_Pearson_matches_published_intervals(int x, int n, double low, double high, int decimals, string source)
    {
        var ci = ProportionIntervals.ClopperPearson(x, n);
        AssertNear.Decimals(low, ci.Low, decimals, source);
        AssertNear.Decimals(high, ci.High, decimals, source);
    }

    [Fact]
    public void Jeffreys_matches_published_interval()
    {
        // 5/10 Jeffreys 0.2235287 – 0.7764713 — R output, package test snapshot [pub]
        var ci = ProportionIntervals.Jeffreys(5, 10);
        AssertNear.Decimals(0.2235287, ci.Low, 7, "R output, package test snapshot [pub]");
        AssertNear.Decimals(0.7764713, ci.High, 7, "R output, package test snapshot [pub]");
    }

    [Fact]
    public void Agresti_Coull_matches_published_interval()
    {
        // 5/10 Agresti–Coull (z²/2 form) 0.2365931 – 0.7634069 — same (R output, package test snapshot) [pub]
        var ci = ProportionIntervals.AgrestiCoull(5, 10);
        AssertNear.Decimals(0.2365931, ci.Low, 7, "R output, package test snapshot [pub]");
        AssertNear.Decimals(0.7634069, ci.High, 7, "R output, package test snapshot [pub]");
    }

    public static TheoryData<int, int, double> Grid => new()
    {
        { 0, 1, 0.95 }, { 1, 1, 0.95 }, { 0, 20, 0.95 }, { 3, 20, 0.90 }, { 10, 20, 0.99 },
        { 19, 20, 0.95 }, { 1, 300, 0.95 }, { 150, 300, 0.8 }, { 299, 300, 0.95 }, { 40, 1000, 0.999 },
    };

    [Theory]
    [MemberData(nameof(Grid))]
    public void Wilson_ends_solve_the_score_equation(int x, int n, double confidence)
    {
        // Independent route: the Wilson interval is {p : (x − np)² ≤ z²·np(1−p)} (Wilson 1927), so each end
        // inside (0, 1) is a root of that quadratic, found here by Brent on MathNet's normal quantile.
        var z = Normal.InvCDF(0, 1, 0.5 + (confidence / 2));
        double Score(double p) => ((x - (n * p)) * (x - (n * p))) - (z * z * n * p * (1 - p));
        var ci = ProportionIntervals.Wilson(x, n, confidence);
        // Bracket each end between the sample proportion (where the quadratic is negative) and 0 or 1,
        // keeping clear of the trivial root at p = 0 (x = 0) or p = 1 (x = n).
        var phat = Math.Clamp((double)x / n, 1e-12, 1 - 1e-12);
        var low = x == 0 ? 0.0 : Brent.FindRoot(Score, 1e-300, phat, 1e-14);
        var high = x == n ? 1.0 : Brent.FindRoot(Score, phat, 1 - 1e-16, 1e-14);
        AssertNear.Absolute(low, ci.Low, 1e-10, "low");
        AssertNear.Absolute(high, ci.High, 1e-10, "high");
    }

    [Theory]
    [MemberData(nameof(Grid))]
    public void Clopper_Pearson_ends_invert_the_binomial_tails(int x, int n, double confidence)
    {
        // Independent route: the Clopper–Pearson ends are where a binomial tail equals α/2
        // (P(X ≥ x; low) = α/2, P(X ≤ x; high) = α/2), solved with MathNet's Binomial CDF instead of Beta quantiles.
        var halfAlpha = (1 - confidence) / 2;
        var ci = ProportionIntervals.ClopperPearson(x, n, confidence);
        var low = x == 0 ? 0.0 : Brent.FindRoot(p => 1 - Binomial.CDF(p, n, x - 1) - halfAlpha, 1e-12, 1 - 1e-12, 1e-14);
        var high = x == n ? 1.0 : Brent.FindRoot(p => Binomial.CDF(p, n, x) - halfAlpha, 1e-12, 1 - 1e-12, 1e-14);
        AssertNear.Absolute(low, ci.Low, 1e-8, "low");
        AssertNear.Absolute(high, ci.High, 1e-8, "high");
    }

    [Theory]
    [MemberData(nameof(Grid))]
    public void One_sided_Wilson_bound_uses_the_one_sided_quantile(int x, int n, double confidence)
    {
        // The one-sided bound at level c is the two-sided upper end at level 2c − 1 (same z = Φ⁻¹(c)).
        var expected = x == n ? 1.0 : ProportionIntervals.Wilson(x, n, (2 * confidence) - 1).High;
        AssertNear.Absolute(expected, ProportionIntervals.WilsonUpper(x, n, confidence), 1e-12);
        Assert.True(ProportionIntervals.WilsonUpper(x, n, confidence) <= ProportionIntervals.Wilson(x, n, confidence).High);
    }

    [Fact]
    public void Jeffreys_ends_are_Beta_posterior_tail_points()
    {
        // Cross-check with MathNet's Beta CDF: the Beta(x + ½, n − x + ½) mass below the ends is α/2 and 1 − α/2.
        var ci = ProportionIntervals.Jeffreys(7, 40, 0.9);
        AssertNear.Absolute(0.05, Beta.CDF(7.5, 33.5, ci.Low), 1e-10);
        AssertNear.Absolute(0.95, Beta.CDF(7.5, 33.5, ci.High), 1e-10);
        // Boundary modification (Brown, Cai & DasGupta 2001): 0 at x = 0, 1 at x = n.
        Assert.Equal(0.0, ProportionIntervals.Jeffreys(0, 12).Low);
        Assert.Equal(1.0, ProportionIntervals.Jeffreys(12, 12).High);
    }

    [Fact]
    public void Agresti_Coull_is_clipped_to_the_unit_interval()
    {
        var ci = ProportionIntervals.AgrestiCoull(0, 5);
        Assert.Equal(0.0, ci.Low);
        Assert.True(ci.High < 1);
        Assert.Equal(1.0, ProportionIntervals.AgrestiCoull(5, 5).High);
    }

    [Fact]
    public void No_trials_give_the_whole_unit_interval()
    {
        var full = new Interval(0, 1);
        Assert.Equal(full, ProportionIntervals.Wilson(0, 0));
        Assert.Equal(full, ProportionIntervals.ClopperPearson(0, 0));
        Assert.Equal(full, ProportionIntervals.Jeffreys(0, 0));
        Assert.Equal(full, ProportionIntervals.AgrestiCoull(0, 0));
        Assert.Equal(1.0, ProportionIntervals.WilsonUpper(0, 0));
    }

    [Theory]
    [InlineData(-1, 10, 0.95)]
    [InlineData(11, 10, 0.95)]
    [InlineData(0, -1, 0.95)]
    [InlineData(5, 10, 0.0)]
    [InlineData(5, 10, 1.0)]
    [InlineData(5, 10, double.NaN)]
    public void Invalid_arguments_throw(int x, int n, double confidence)
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => ProportionIntervals.Wilson(x, n, confidence));
        Assert.Throws<ArgumentOutOfRangeException>(() => ProportionIntervals.WilsonUpper(x, n, confidence));
        Assert.Throws<ArgumentOutOfRangeException>(() => ProportionIntervals.ClopperPearson(x, n, confidence));
        Assert.Throws<ArgumentOutOfRangeException>(() => ProportionIntervals.Jeffreys(x, n, confidence));
        Assert.Throws<ArgumentOutOfRangeException>(() => ProportionIntervals.AgrestiCoull(x, n, confidence));
    }
}
