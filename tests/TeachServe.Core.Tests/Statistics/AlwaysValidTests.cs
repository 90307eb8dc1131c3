using MathNet.Numerics;
using MathNet.Numerics.Distributions;
using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

/// <summary>REFERENCES.md section D (mixture SPRT row), the two-proportion form, and type I error under peeking.</summary>
public class AlwaysValidTests
{
    private const string Source = "Johari, Pekelis & Walsh 2017 formula [derived]";

    [Fact]
    public void Mixture_ratio_matches_the_derived_value()
    {
        // one-sample normal, σ² = 1, τ² = 1, θ0 = 0, n = 100, mean 0.3: Λ = 8.567, always-valid p = 0.1167 — [derived]
        var lambda = AlwaysValid.MixtureLikelihoodRatio(100, 0.3, 0, 1, 1);
        AssertNear.Decimals(8.567, lambda, 3, Source);
        AssertNear.Decimals(0.1167, AlwaysValid.PValue(100, 0.3, 0, 1, 1), 4, Source);
        // Second method: Λ is the likelihood ratio of N(θ, σ²) to N(θ0, σ²) for the data, averaged over the
        // mixing law θ ~ N(θ0, τ²); integrated numerically here.
        AssertNear.Relative(IntegratedMixture(100, 0.3, 0, 1, 1), lambda, 1e-10, "numerical mixture");
    }

    [Theory]
    [InlineData(1, 0.5, 0.0, 1.0, 1.0)]
    [InlineData(37, -0.12, 0.1, 2.5, 0.04)]
    [InlineData(500, 0.02, 0.0, 0.25, 0.01)]
    [InlineData(2000, 1.01, 1.0, 1.0, 0.001)]
    public void Mixture_ratio_equals_the_integrated_likelihood_ratio(int n, double mean, double theta0, double sigma2, double tau2) =>
        AssertNear.Relative(IntegratedMixture(n, mean, theta0, sigma2, tau2),
            AlwaysValid.MixtureLikelihoodRatio(n, mean, theta0, sigma2, tau2), 1e-9);

    [Fact]
    public void Two_proportion_ratio_is_the_normal_formula_with_the_plug_in_variance()
    {
        // With equal arms of n, the difference of proportions is a mean of n paired differences whose variance
        // is p1(1 − p1) + p2(1 − p2): the one-sample formula with that σ² and θ0 = 0.
        const int n = 400;
        double p1 = 130.0 / n, p2 = 100.0 / n, sigma2 = (p1 * (1 - p1)) + (p2 * (1 - p2));
        var expected = AlwaysValid.MixtureLikelihoodRatio(n, p1 - p2, 0, sigma2, 0.01);
        AssertNear.Relative(expected, AlwaysValid.TwoProportionMixtureLikelihoodRatio(130, n, 100, n, 0.01), 1e-12);
        AssertNear.Relative(1 / expected, AlwaysValid.TwoProportionPValue(130, n, 100, n, 0.01), 1e-12);

        // Unequal arms: v = p1(1 − p1)/n1 + p2(1 − p2)/n2, Λ = √(v/(v + τ²))·exp(τ²d²/(2v(v + τ²))), written out.
        double q1 = 45.0 / 300, q2 = 80.0 / 700, v = (q1 * (1 - q1) / 300) + (q2 * (1 - q2) / 700), d = q1 - q2, tau2 = 0.02;
        var written = Math.Sqrt(v / (v + tau2)) * Math.Exp(tau2 * d * d / (2 * v * (v + tau2)));
        AssertNear.Relative(written, AlwaysValid.TwoProportionMixtureLikelihoodRatio(45, 300, 80, 700, tau2), 1e-12);
    }

    [Fact]
    public void No_data_means_no_evidence()
    {
        Assert.Equal(1.0, AlwaysValid.MixtureLikelihoodRatio(0, 5.0, 0, 1, 1));
        Assert.Equal(1.0, AlwaysValid.PValue(0, 5.0, 0, 1, 1));
        Assert.Equal(1.0, AlwaysValid.TwoProportionMixtureLikelihoodRatio(0, 0, 3, 10, 0.1));
        Assert.Equal(1.0, AlwaysValid.TwoProportionMixtureLikelihoodRatio(0, 10, 0, 12, 0.1));
        Assert.Equal(1.0, AlwaysValid.TwoProportionPValue(10, 10, 0, 12, 0.1));
        Assert.Equal(0.0, AlwaysValid.PValueOf(double.PositiveInfinity));
        Assert.Equal(1.0, AlwaysValid.PValueOf(0.3));
    }

    [Fact]
    public void Monitor_keeps_the_running_minimum()
    {
        var monitor = new AlwaysValidMonitor();
        Assert.Equal(1.0, monitor.PValue);
        Assert.Equal(0.25, monitor.Observe(4.0));
        Assert.Equal(0.25, monitor.Observe(2.0));
        Assert.Equal(0.1, monitor.Observe(10.0), 15);
        Assert.Equal(0.1, monitor.Observe(0.5), 15);
        Assert.Equal(4, monitor.Looks);
        Assert.Equal(0.1, monitor.ObserveMean(100, 0.3, 0, 1, 1), 15);
        Assert.Equal(5, monitor.Looks);

        Assert.Equal(AlwaysValid.PValue(100, 0.3, 0, 1, 1), new AlwaysValidMonitor().ObserveMean(100, 0.3, 0, 1, 1));
        Assert.Equal(AlwaysValid.TwoProportionPValue(60, 200, 40, 200, 0.01),
            new AlwaysValidMonitor().ObserveTwoProportions(60, 200, 40, 200, 0.01));
    }

    [Fact]
    public void Continuous_monitoring_keeps_the_type_I_error()
    {
        // Under H0 (θ = θ0) the chance that the running p ever drops to α is at most α (Ville's inequality).
        // 4000 seeded streams of 300 N(0, 1) observations, a look after each one. A naive fixed-n z test
        // repeated at every look is run alongside, to show the simulation can see an inflated error rate.
        const int streams = 4000, length = 300;
        const double alpha = 0.05;
        var random = new Random(424242);
        var z = Normal.InvCDF(0, 1, 1 - (alpha / 2));
        int alwaysValidRejections = 0, naiveRejections = 0;
        for (var s = 0; s < streams; s++)
        {
            var monitor = new AlwaysValidMonitor();
            double sum = 0;
            bool naive = false;
            for (var n = 1; n <= length; n++)
            {
                sum += Normal.Sample(random, 0, 1);
                monitor.ObserveMean(n, sum / n, 0, 1, 1);
                naive |= Math.Abs(sum / Math.Sqrt(n)) >= z;
            }

            alwaysValidRejections += monitor.PValue <= alpha ? 1 : 0;
            naiveRejections += naive ? 1 : 0;
        }

        var standardError = Math.Sqrt(alpha * (1 - alpha) / streams);
        Assert.True((double)alwaysValidRejections / streams <= alpha + (3 * standardError), $"always valid: {alwaysValidRejections}/{streams}");
        Assert.True((double)naiveRejections / streams > 3 * alpha, $"naive peeking: {naiveRejections}/{streams}");
    }

    [Fact]
    public void A_real_effect_is_found()
    {
        var random = new Random(99);
        var found = 0;
        for (var s = 0; s < 500; s++)
        {
            var monitor = new AlwaysValidMonitor();
            double sum = 0;
            for (var n = 1; n <= 300; n++)
            {
                sum += Normal.Sample(random, 0.3, 1);
                monitor.ObserveMean(n, sum / n, 0, 1, 1);
            }

            found += monitor.PValue <= 0.05 ? 1 : 0;
        }

        Assert.True(found >= 475, $"{found}/500");
    }

    [Fact]
    public void Invalid_arguments_throw()
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.MixtureLikelihoodRatio(-1, 0, 0, 1, 1));
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.MixtureLikelihoodRatio(10, 0, 0, 0, 1));
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.MixtureLikelihoodRatio(10, 0, 0, 1, -1));
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.MixtureLikelihoodRatio(0, 0, 0, 1, double.NaN));
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.MixtureLikelihoodRatio(10, double.NaN, 0, 1, 1));
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.TwoProportionMixtureLikelihoodRatio(11, 10, 1, 10, 1));
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.TwoProportionMixtureLikelihoodRatio(1, 10, 1, 10, 0));
        Assert.Throws<ArgumentOutOfRangeException>(() => AlwaysValid.PValueOf(double.NaN));
        Assert.Throws<ArgumentOutOfRangeException>(() => new AlwaysValidMonitor().Observe(-1));
    }

    /// <summary>
    /// ∫ LR(θ)·φ(θ; θ0, τ²) dθ with LR(θ) = exp((n/σ²)((θ − θ0)(x̄ − θ0) − (θ − θ0)²/2)), the likelihood ratio of
    /// n normal observations with mean x̄. Gauss–Legendre over ±12 standard deviations of the integrand's bump.
    /// </summary>
    private static double IntegratedMixture(int n, double mean, double theta0, double sigma2, double tau2)
    {
        var precision = (n / sigma2) + (1 / tau2);
        var centre = n * (mean - theta0) / sigma2 / precision;
        var halfWidth = 12 / Math.Sqrt(precision);
        double Integrand(double delta) =>
            Math.Exp((n / sigma2 * ((delta * (mean - theta0)) - (delta * delta / 2))) - (delta * delta / (2 * tau2)))
            / Math.Sqrt(2 * Math.PI * tau2);
        return Integrate.GaussLegendre(Integrand, centre - halfWidth, centre + halfWidth, 256);
    }
}
