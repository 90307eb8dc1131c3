using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

public class PreciseTests
{
    [Theory]
    [InlineData(1e-300)]
    [InlineData(1e-12)]
    [InlineData(-3e-9)]
    [InlineData(1e-5)]
    [InlineData(0.001)]
    [InlineData(0.05)]
    [InlineData(-0.1)]
    [InlineData(0.3)]
    [InlineData(-0.9)]
    public void ExpM1_and_LogP1_keep_full_relative_precision(double x)
    {
        // Independent identities for |x| < 1: eˣ − 1 = 2t/(1 − t) with t = tanh(x/2) (tanh has no cancellation),
        // and ln(1 + x) = 2·atanh(x/(2 + x)).
        var t = Math.Tanh(x / 2);
        AssertNear.Relative(2 * t / (1 - t), Precise.ExpM1(x), 4e-16, "expm1");
        AssertNear.Relative(2 * Math.Atanh(x / (2 + x)), Precise.LogP1(x), 4e-16, "log1p");
    }

    [Theory]
    [InlineData(-2.0)]
    [InlineData(1.5)]
    [InlineData(15.0)]
    public void ExpM1_away_from_zero_is_the_plain_difference(double x) =>
        AssertNear.Relative(Math.Exp(x) - 1, Precise.ExpM1(x), 4e-16);

    [Fact]
    public void Edge_values()
    {
        Assert.Equal(0.0, Precise.ExpM1(0.0));
        Assert.Equal(-1.0, Precise.ExpM1(-800));
        Assert.Equal(double.PositiveInfinity, Precise.ExpM1(800));
        Assert.Equal(double.NegativeInfinity, Precise.LogP1(-1.0));
        Assert.True(double.IsNaN(Precise.LogP1(-2.0)));
        Assert.True(double.IsNaN(Precise.ExpM1(double.NaN)));
    }
}
