using MathNet.Numerics;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// An always-valid test of live-check error: the mixture likelihood ratio of a beta prior over drift errors p &gt; p0
/// against p0 (Robbins, "Statistical methods related to the law of the iterated logarithm", Ann. Math. Stat. 41, 1970;
/// Howard, Ramdas, McAuliffe &amp; Sekhon, "Time-uniform, nonparametric, nonasymptotic confidence sequences", Ann.
/// Stat. 49, 2021). After n checks with x wrong,
/// Λ = ∫_{p0}^{1} (p/p0)^x ((1−p)/(1−p0))^{n−x} π(p) dp with π = Beta(a, b) restricted to [p0, 1], in closed form
/// Λ = B(a+x, b+n−x)·I_{1−p0}(b+n−x, a+x) / (B(a, b)·I_{1−p0}(b, a)·p0^x·(1−p0)^{n−x}).
/// </summary>
/// <remarks>
/// Each p' ≥ p0 gives a likelihood ratio whose expectation per check is p·p'/p0 + (1−p)(1−p')/(1−p0) ≤ 1 whenever the
/// true error p ≤ p0, so Λ is a non-negative supermartingale with Λ0 = 1 under every in-target error, and Ville's
/// inequality bounds the probability that it ever reaches 1/α by α, however long the annotator works. It is therefore a
/// test, not a renewal chart: its false-alarm probability over all time is ≤ α rather than an average run length, and
/// evidence gathered while the annotator was good delays a later alarm (it restarts after a refresher).
/// </remarks>
public static class MixtureMonitor
{
    /// <summary>ln Λ after <paramref name="checks"/> checks with <paramref name="errors"/> wrong.</summary>
    public static double LogLikelihoodRatio(int checks, int errors, double p0, double a, double b)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(errors);
        ArgumentOutOfRangeException.ThrowIfLessThan(checks, errors);
        if (!(p0 > 0 && p0 < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(p0), p0, "Must lie in (0, 1).");
        }

        if (!(a > 0 && b > 0))
        {
            throw new ArgumentOutOfRangeException(nameof(a), "The beta prior's parameters must be positive.");
        }

        if (checks == 0)
        {
            return 0.0;
        }

        double x = errors, y = checks - errors;
        var numerator = SpecialFunctions.BetaLn(a + x, b + y) + Math.Log(SpecialFunctions.BetaRegularized(b + y, a + x, 1 - p0));
        var denominator = SpecialFunctions.BetaLn(a, b) + Math.Log(SpecialFunctions.BetaRegularized(b, a, 1 - p0));
        return numerator - denominator - (x * Math.Log(p0)) - (y * Math.Log(1 - p0));
    }

    /// <summary>Whether the test rejects "error ≤ p0" at level <paramref name="alpha"/>: Λ ≥ 1/α.</summary>
    public static bool Rejects(int checks, int errors, double p0, double a, double b, double alpha) =>
        LogLikelihoodRatio(checks, errors, p0, a, b) >= -Math.Log(alpha);
}
