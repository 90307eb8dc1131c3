using MathNet.Numerics.Distributions;
using TeachServe.Core.LiveQuality;
using TeachServe.Core.Tests.Support;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

public sealed class MixtureMonitorTests
{
    [Theory]
    [InlineData(0, 0)]
    [InlineData(10, 1)]
    [InlineData(40, 12)]
    [InlineData(200, 18)]
    public void Closed_form_equals_numerical_integration_of_the_mixture(int n, int x)
    {
        // Λ = ∫_{p0}^1 (p/p0)^x ((1−p)/(1−p0))^(n−x) π(p) dp, π = Beta(a, b) restricted to [p0, 1] [derived]; the
        // integral by Simpson's rule on 20,000 panels with MathNet's beta density as the reference.
        const double p0 = 0.1, a = 1, b = 4;
        var prior = new Beta(a, b);
        var mass = 1 - prior.CumulativeDistribution(p0);
        const int panels = 20000;
        var step = (1 - p0) / panels;
        var sum = 0.0;
        for (var i = 0; i <= panels; i++)
        {
            var p = p0 + (i * step);
            var f = p >= 1 ? 0 : Math.Exp((x * Math.Log(p / p0)) + ((n - x) * Math.Log((1 - p) / (1 - p0)))) * prior.Density(p) / mass;
            sum += f * (i == 0 || i == panels ? 1 : i % 2 == 1 ? 4 : 2);
        }

        var numeric = sum * step / 3;
        AssertNear.Relative(numeric, Math.Exp(MixtureMonitor.LogLikelihoodRatio(n, x, p0, a, b)), 1e-6);
    }

    [Theory]
    [InlineData(0.10, 0.05, 11UL)]
    [InlineData(0.20, 0.01, 12UL)]
    public void False_alarm_probability_over_a_long_record_stays_below_alpha(double p0, double alpha, ulong seed)
    {
        // Ville's inequality: P(Λ ever ≥ 1/α | error = p0) ≤ α. Seeded simulation of 2,000 annotators × 1,000 checks
        // exactly at p0; the bound must hold within three Monte-Carlo standard errors.
        var random = new SeededRandom(seed);
        const int runs = 2000, checks = 1000;
        var alarms = 0;
        for (var r = 0; r < runs; r++)
        {
            var errors = 0;
            for (var n = 1; n <= checks; n++)
            {
                if (random.NextDouble() < p0)
                {
                    errors++;
                    if (MixtureMonitor.Rejects(n, errors, p0, 1, 4, alpha))
                    {
                        alarms++;
                        break;
                    }
                }
            }
        }

        var rate = (double)alarms / runs;
        Assert.True(rate <= alpha + (3 * Math.Sqrt(alpha * (1 - alpha) / runs)), $"false-alarm rate {rate} against alpha {alpha}");
    }

    [Fact]
    public void Detects_a_doubled_error_rate_in_nearly_every_record()
    {
        var random = new SeededRandom(21);
        const int runs = 500;
        var detected = 0;
        for (var r = 0; r < runs; r++)
        {
            var errors = 0;
            for (var n = 1; n <= 1000; n++)
            {
                if (random.NextDouble() < 0.3)
                {
                    errors++;
                    if (MixtureMonitor.Rejects(n, errors, 0.15, 1, 4, 0.01))
                    {
                        detected++;
                        break;
                    }
                }
            }
        }

        Assert.True(detected >= 0.99 * runs, $"{detected}/{runs}");
    }
}
