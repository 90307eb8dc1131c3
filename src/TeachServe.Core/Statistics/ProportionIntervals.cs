using MathNet.Numerics.Distributions;

namespace TeachServe.Core.Statistics;

/// <summary>
/// Confidence intervals for a binomial proportion from <c>successes</c> of <c>trials</c>.
/// </summary>
/// <remarks>
/// Every method validates <c>0 ≤ successes ≤ trials</c> and <c>0 &lt; confidence &lt; 1</c>
/// (<see cref="ArgumentOutOfRangeException"/> otherwise, NaN included). With <c>trials = 0</c> there is
/// no evidence, and every method returns the whole unit interval <c>[0, 1]</c>. Bounds are clipped to [0, 1].
/// </remarks>
public static class ProportionIntervals
{
    /// <summary>
    /// Wilson score interval (Wilson 1927; Newcombe, Stat Med 17:857, 1998, method 3): the proportions
    /// <c>p</c> with <c>|x − np| ≤ z·√(np(1−p))</c>, z the two-sided normal quantile.
    /// </summary>
    public static Interval Wilson(int successes, int trials, double confidence = 0.95)
    {
        Guard.Count(successes, trials, nameof(successes), nameof(trials));
        Guard.Confidence(confidence);
        return WilsonScore(successes, trials, Guard.TwoSidedZ(confidence));
    }

    /// <summary>
    /// One-sided Wilson upper bound at level <paramref name="confidence"/>: the Wilson upper end with
    /// <c>z = Φ⁻¹(confidence)</c>, so that the true proportion lies below it with that confidence.
    /// (The two-sided 95 % upper end equals <c>WilsonUpper(x, n, 0.975)</c>.)
    /// </summary>
    public static double WilsonUpper(int successes, int trials, double confidence = 0.95)
    {
        Guard.Count(successes, trials, nameof(successes), nameof(trials));
        Guard.Confidence(confidence);
        return WilsonScore(successes, trials, Normal.InvCDF(0.0, 1.0, confidence)).High;
    }

    /// <summary>
    /// Clopper–Pearson "exact" interval (Biometrika 26, 1934), from Beta quantiles:
    /// <c>[B(α/2; x, n−x+1), B(1−α/2; x+1, n−x)]</c>, with 0 at <c>x = 0</c> and 1 at <c>x = n</c>.
    /// </summary>
    public static Interval ClopperPearson(int successes, int trials, double confidence = 0.95)
    {
        Guard.Count(successes, trials, nameof(successes), nameof(trials));
        Guard.Confidence(confidence);
        var alpha = 1.0 - confidence;
        var low = successes == 0 ? 0.0 : Beta.InvCDF(successes, trials - successes + 1, alpha / 2);
        var high = successes == trials ? 1.0 : Beta.InvCDF(successes + 1, trials - successes, 1 - (alpha / 2));
        return new Interval(low, high);
    }

    /// <summary>
    /// Jeffreys interval: equal-tailed quantiles of the Beta(x + ½, n − x + ½) posterior, with the
    /// lower end set to 0 at <c>x = 0</c> and the upper to 1 at <c>x = n</c>
    /// (Brown, Cai &amp; DasGupta, Stat Sci 16:101, 2001, section 4.1.2).
    /// </summary>
    public static Interval Jeffreys(int successes, int trials, double confidence = 0.95)
    {
        Guard.Count(successes, trials, nameof(successes), nameof(trials));
        Guard.Confidence(confidence);
        var alpha = 1.0 - confidence;
        double a = successes + 0.5, b = trials - successes + 0.5;
        var low = successes == 0 ? 0.0 : Beta.InvCDF(a, b, alpha / 2);
        var high = successes == trials ? 1.0 : Beta.InvCDF(a, b, 1 - (alpha / 2));
        return new Interval(low, high);
    }

    /// <summary>
    /// Agresti–Coull interval (Am Stat 52:119, 1998) in its general form: add z²/2 successes and z²/2
    /// failures, then the Wald interval on <c>ñ = n + z²</c>, clipped to [0, 1].
    /// </summary>
    public static Interval AgrestiCoull(int successes, int trials, double confidence = 0.95)
    {
        Guard.Count(successes, trials, nameof(successes), nameof(trials));
        Guard.Confidence(confidence);
        var z = Guard.TwoSidedZ(confidence);
        var z2 = z * z;
        var nTilde = trials + z2;
        var pTilde = (successes + (z2 / 2)) / nTilde;
        var half = z * Math.Sqrt(pTilde * (1 - pTilde) / nTilde);
        return new Interval(Math.Max(0.0, pTilde - half), Math.Min(1.0, pTilde + half));
    }

    /// <summary>Wilson's interval for a given critical value z (Newcombe 1998, method 3, closed form).</summary>
    internal static Interval WilsonScore(int successes, int trials, double z)
    {
        if (trials == 0)
        {
            return new Interval(0.0, 1.0);
        }

        double x = successes, n = trials, z2 = z * z;
        var centre = (x + (z2 / 2)) / (n + z2);
        var half = z / (n + z2) * Math.Sqrt((x * (n - x) / n) + (z2 / 4));
        // At x = 0 (x = n) the lower (upper) end is exactly 0 (1); the subtraction would only leave rounding noise.
        var low = successes == 0 ? 0.0 : Math.Max(0.0, centre - half);
        var high = successes == trials ? 1.0 : Math.Min(1.0, centre + half);
        return new Interval(low, high);
    }
}
