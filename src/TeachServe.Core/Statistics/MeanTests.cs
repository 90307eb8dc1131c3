using MathNet.Numerics.Distributions;
using MathNet.Numerics.Statistics;

namespace TeachServe.Core.Statistics;

/// <summary>Tests and intervals for means of real-valued samples (e.g. per-annotator error rates).</summary>
/// <remarks>
/// A NaN in a sample propagates to a NaN result. Samples with fewer than two values give NaN results
/// (there is no variance estimate); no exception is thrown for them.
/// </remarks>
public static class MeanTests
{
    /// <summary>
    /// Welch's unequal-variance t test of equal means (Welch, Biometrika 34, 1947), two-sided:
    /// <c>t = (x̄ − ȳ)/√(s²x/nx + s²y/ny)</c> with the Welch–Satterthwaite degrees of freedom
    /// <c>(s²x/nx + s²y/ny)² / ((s²x/nx)²/(nx − 1) + (s²y/ny)²/(ny − 1))</c>. Matches R's <c>t.test(x, y)</c>.
    /// All fields are NaN when either sample has fewer than two values or both have zero variance.
    /// </summary>
    public static TestResult WelchT(IReadOnlyList<double> x, IReadOnlyList<double> y)
    {
        ArgumentNullException.ThrowIfNull(x);
        ArgumentNullException.ThrowIfNull(y);
        if (x.Count < 2 || y.Count < 2)
        {
            return new TestResult(double.NaN, double.NaN, double.NaN);
        }

        var (meanX, varX) = x.MeanVariance();
        var (meanY, varY) = y.MeanVariance();
        double vx = varX / x.Count, vy = varY / y.Count, v = vx + vy;
        if (!(v > 0))
        {
            return new TestResult(double.NaN, double.NaN, double.NaN);
        }

        var t = (meanX - meanY) / Math.Sqrt(v);
        var df = v * v / ((vx * vx / (x.Count - 1)) + (vy * vy / (y.Count - 1)));
        return new TestResult(t, df, 2 * StudentT.CDF(0.0, 1.0, df, -Math.Abs(t)));
    }

    /// <summary>
    /// Student t interval for the mean of <paramref name="x"/>: <c>x̄ ± t(1 − α/2; n − 1)·s/√n</c>.
    /// <c>(NaN, NaN)</c> when <paramref name="x"/> has fewer than two values.
    /// </summary>
    public static Interval MeanTInterval(IReadOnlyList<double> x, double confidence = 0.95)
    {
        ArgumentNullException.ThrowIfNull(x);
        Guard.Confidence(confidence);
        if (x.Count < 2)
        {
            return new Interval(double.NaN, double.NaN);
        }

        var (mean, variance) = x.MeanVariance();
        var half = StudentT.InvCDF(0.0, 1.0, x.Count - 1, 0.5 + (0.5 * confidence)) * Math.Sqrt(variance / x.Count);
        return new Interval(mean - half, mean + half);
    }
}
