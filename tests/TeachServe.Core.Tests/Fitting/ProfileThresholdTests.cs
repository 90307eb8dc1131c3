using MathNet.Numerics.Distributions;
using TeachServe.Core.Fitting;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Fitting;

public class ProfileThresholdTests
{
    [Fact]
    public void Chi_square_one_degree_quantile_at_95_percent()
    {
        var threshold = LearnerFit.ProfileThreshold(0.95);
        // χ²₁(0.95) = 3.841459: standard tables, common practice.
        AssertNear.Decimals(3.841459, threshold, 6);
        // Second method: χ²₁ is the square of a standard normal, so χ²₁(0.95) = z²(0.975), z = 1.959964 (REFERENCES.md conventions).
        AssertNear.Relative(Normal.InvCDF(0, 1, 0.975) * Normal.InvCDF(0, 1, 0.975), threshold, 1e-12);
        AssertNear.Decimals(1.959964 * 1.959964, threshold, 5);
        // MathNet.Numerics 5.0 reference (REFERENCES.md E).
        Assert.Equal(ChiSquared.InvCDF(1, 0.95), threshold);
    }

    [Theory]
    [InlineData(0.90, 2.705543)]
    [InlineData(0.99, 6.634897)]
    public void Other_levels_match_the_tables(double confidence, double expected)
    {
        // χ²₁ quantiles: standard tables, from memory; cross-checked against z² below.
        AssertNear.Decimals(expected, LearnerFit.ProfileThreshold(confidence), 6);
        var z = Normal.InvCDF(0, 1, 0.5 + (confidence / 2));
        AssertNear.Relative(z * z, LearnerFit.ProfileThreshold(confidence), 1e-12);
    }

    [Theory]
    [InlineData(0.0)]
    [InlineData(1.0)]
    [InlineData(double.NaN)]
    public void Confidence_outside_the_open_unit_interval_is_refused(double confidence) =>
        Assert.Throws<ArgumentOutOfRangeException>(() => LearnerFit.ProfileThreshold(confidence));
}
