using MathNet.Numerics.Distributions;

namespace TeachServe.Core.Statistics;

/// <summary>
/// Planning an experiment that compares two proportions (e.g. two arms' pass rates): annotators per arm
/// and power, for the two-sided pooled z test at level α without continuity correction.
/// </summary>
/// <remarks>
/// Same formula as R's <c>power.prop.test</c> (default <c>strict = FALSE</c>, the far tail is ignored):
/// <c>power = Φ((√n·|p1 − p2| − z(1−α/2)·√((p1 + p2)(1 − p̄))) / √(p1(1 − p1) + p2(1 − p2)))</c>, p̄ = (p1 + p2)/2.
/// R solves it for n numerically (to about 1e-4); here the closed form is used. All arguments are validated
/// with <see cref="ArgumentOutOfRangeException"/>.
/// </remarks>
public static class SamplePlanner
{
    /// <summary>Annotators needed per arm (not rounded up) to reach <paramref name="power"/> when the rates are p1 and p2.</summary>
    /// <param name="p1">Rate in arm 1, in (0, 1).</param>
    /// <param name="p2">Rate in arm 2, in (0, 1), different from p1.</param>
    /// <param name="power">Wanted power, in (0, 1). A power already reached with no data at all gives 0.</param>
    /// <param name="alpha">Two-sided significance level, in (0, 1).</param>
    public static double TwoProportionSampleSize(double p1, double p2, double power, double alpha = 0.05)
    {
        Validate(p1, p2, alpha);
        Guard.OpenUnit(power, nameof(power));
        if (p1 == p2)
        {
            throw new ArgumentOutOfRangeException(nameof(p2), p2, "Must differ from p1: no sample size detects a zero difference.");
        }

        var (nullSd, alternativeSd) = StandardDeviations(p1, p2);
        var rootN = ((CriticalValue(alpha) * nullSd) + (Normal.InvCDF(0.0, 1.0, power) * alternativeSd)) / Math.Abs(p1 - p2);
        return rootN > 0 ? rootN * rootN : 0.0;
    }

    /// <summary>Power with <paramref name="n"/> annotators per arm (n may be fractional, ≥ 0).</summary>
    public static double TwoProportionPower(double n, double p1, double p2, double alpha = 0.05)
    {
        if (!(n >= 0) || double.IsPositiveInfinity(n))
        {
            throw new ArgumentOutOfRangeException(nameof(n), n, "Must be non-negative and finite.");
        }

        Validate(p1, p2, alpha);
        var (nullSd, alternativeSd) = StandardDeviations(p1, p2);
        return Normal.CDF(0.0, 1.0, ((Math.Sqrt(n) * Math.Abs(p1 - p2)) - (CriticalValue(alpha) * nullSd)) / alternativeSd);
    }

    private static void Validate(double p1, double p2, double alpha)
    {
        Guard.OpenUnit(p1, nameof(p1));
        Guard.OpenUnit(p2, nameof(p2));
        Guard.OpenUnit(alpha, nameof(alpha));
    }

    private static double CriticalValue(double alpha) => Normal.InvCDF(0.0, 1.0, 1 - (alpha / 2));

    /// <summary>√n times the standard error of p1 − p2 under H0 (pooled p̄) and under H1.</summary>
    private static (double Null, double Alternative) StandardDeviations(double p1, double p2)
    {
        var mean = (p1 + p2) / 2;
        return (Math.Sqrt(2 * mean * (1 - mean)), Math.Sqrt((p1 * (1 - p1)) + (p2 * (1 - p2))));
    }
}
