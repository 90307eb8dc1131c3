using MathNet.Numerics.RootFinding;
using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

public class SamplePlannerTests
{
    [Fact]
    public void Sample_size_matches_power_prop_test()
    {
        // p1 = 0.5, p2 = 0.75, power 0.9, α 0.05: n = 76.7 per group — R power.prop.test documentation [pub]
        var n = SamplePlanner.TwoProportionSampleSize(0.5, 0.75, 0.9);
        AssertNear.Decimals(76.7, n, 1, "R power.prop.test documentation [pub]");
    }

    [Fact]
    public void Power_matches_power_prop_test()
    {
        // n = 50, p1 = 0.5, p2 = 0.75: power 0.740 — R power.prop.test documentation [pub]
        AssertNear.Decimals(0.740, SamplePlanner.TwoProportionPower(50, 0.5, 0.75), 3, "R power.prop.test documentation [pub]");
    }

    [Theory]
    [InlineData(0.5, 0.75, 0.9, 0.05)]
    [InlineData(0.1, 0.05, 0.8, 0.05)]
    [InlineData(0.3, 0.35, 0.95, 0.01)]
    public void Sample_size_is_the_root_of_the_power_curve(double p1, double p2, double power, double alpha)
    {
        // Independent route, as R does it: solve power(n) = target numerically.
        var byRoot = Brent.FindRoot(n => SamplePlanner.TwoProportionPower(n, p1, p2, alpha) - power, 1, 1e6, 1e-14, 200);
        AssertNear.Relative(byRoot, SamplePlanner.TwoProportionSampleSize(p1, p2, power, alpha), 1e-9);
        Assert.Equal(SamplePlanner.TwoProportionSampleSize(p1, p2, power, alpha), SamplePlanner.TwoProportionSampleSize(p2, p1, power, alpha), 12);
    }

    [Fact]
    public void Power_is_monotone_and_starts_low()
    {
        var previous = 0.0;
        foreach (var n in new[] { 0.0, 1, 10, 50, 100, 1000 })
        {
            var power = SamplePlanner.TwoProportionPower(n, 0.5, 0.6);
            Assert.True(power > previous);
            previous = power;
        }

        Assert.True(SamplePlanner.TwoProportionPower(0, 0.5, 0.6) < 0.025);
        Assert.Equal(0.0, SamplePlanner.TwoProportionSampleSize(0.5, 0.6, 1e-6));
    }

    [Fact]
    public void Invalid_arguments_throw()
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => SamplePlanner.TwoProportionSampleSize(0.5, 0.5, 0.9));
        Assert.Throws<ArgumentOutOfRangeException>(() => SamplePlanner.TwoProportionSampleSize(0, 0.5, 0.9));
        Assert.Throws<ArgumentOutOfRangeException>(() => SamplePlanner.TwoProportionSampleSize(0.4, 0.5, 1.0));
        Assert.Throws<ArgumentOutOfRangeException>(() => SamplePlanner.TwoProportionSampleSize(0.4, 0.5, 0.9, 0));
        Assert.Throws<ArgumentOutOfRangeException>(() => SamplePlanner.TwoProportionPower(-1, 0.4, 0.5));
        Assert.Throws<ArgumentOutOfRangeException>(() => SamplePlanner.TwoProportionPower(double.NaN, 0.4, 0.5));
    }
}
