using MathNet.Numerics.Distributions;
using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

public class SampleRatioTests
{
    [Fact]
    public void Chi_square_matches_the_worked_example()
    {
        // planned 50/50, observed 600 vs 400: χ² = 40, p = 2.54e−10 — standard worked example [pub]
        var result = SampleRatio.ChiSquare([600, 400], [0.5, 0.5]);
        AssertNear.Absolute(40, result.Statistic, 1e-12, "standard worked example [pub]");
        Assert.Equal(1, result.DegreesOfFreedom);
        AssertNear.SignificantDigits(2.54e-10, result.PValue, 3, "standard worked example [pub]");
        // With one degree of freedom χ² = Z², so p = 2Φ(−√χ²) (MathNet's normal lower tail, no upper-tail complement).
        AssertNear.Relative(2 * Normal.CDF(0, 1, -Math.Sqrt(40)), result.PValue, 1e-9, "normal tail");
    }

    [Fact]
    public void Chi_square_with_unequal_weights_and_three_arms()
    {
        // Planned 2:1:1: expected 500, 250, 250 of 1000, so χ² = 20²/500 + 10²/250 + 10²/250 = 1.6.
        var result = SampleRatio.ChiSquare([520, 240, 240], [2, 1, 1]);
        var expectedChiSquare = (20.0 * 20 / 500) + (10.0 * 10 / 250) + (10.0 * 10 / 250);
        AssertNear.Absolute(expectedChiSquare, result.Statistic, 1e-12);
        Assert.Equal(2, result.DegreesOfFreedom);
        // Two degrees of freedom: the χ² upper tail is exactly exp(−χ²/2).
        AssertNear.Relative(Math.Exp(-expectedChiSquare / 2), result.PValue, 1e-12);
        AssertNear.Absolute(1 - ChiSquared.CDF(2, expectedChiSquare), result.PValue, 1e-14, "MathNet ChiSquared");
    }

    [Fact]
    public void Invalid_inputs()
    {
        Assert.True(double.IsNaN(SampleRatio.ChiSquare([0, 0], [1, 1]).PValue));
        Assert.Throws<ArgumentException>(() => SampleRatio.ChiSquare([1, 2], [1]));
        Assert.Throws<ArgumentException>(() => SampleRatio.ChiSquare([1], [1]));
        Assert.Throws<ArgumentOutOfRangeException>(() => SampleRatio.ChiSquare([1, -2], [1, 1]));
        Assert.Throws<ArgumentOutOfRangeException>(() => SampleRatio.ChiSquare([1, 2], [1, 0]));
        Assert.Throws<ArgumentOutOfRangeException>(() => SampleRatio.ChiSquare([1, 2], [1, double.NaN]));
    }
}
