using MathNet.Numerics.Distributions;

namespace TeachServe.Core.Statistics;

/// <summary>Argument checks shared by the statistics classes. Every comparison is written so that NaN fails it.</summary>
internal static class Guard
{
    public static void Confidence(double confidence, string name = "confidence")
    {
        if (!(confidence > 0.0 && confidence < 1.0))
        {
            throw new ArgumentOutOfRangeException(name, confidence, "Must lie strictly between 0 and 1.");
        }
    }

    public static void Probability(double p, string name)
    {
        if (!(p >= 0.0 && p <= 1.0))
        {
            throw new ArgumentOutOfRangeException(name, p, "Must lie in [0, 1].");
        }
    }

    public static void OpenUnit(double p, string name)
    {
        if (!(p > 0.0 && p < 1.0))
        {
            throw new ArgumentOutOfRangeException(name, p, "Must lie strictly between 0 and 1.");
        }
    }

    public static void Positive(double value, string name)
    {
        if (!(value > 0.0) || double.IsPositiveInfinity(value))
        {
            throw new ArgumentOutOfRangeException(name, value, "Must be positive and finite.");
        }
    }

    /// <summary>The settings of a test of H0: p ≤ p0 against H1: p ≥ p1 with error rates alpha and beta, each in (0, 1), p1 above p0.</summary>
    public static void TestRates(double p0, double p1, double alpha, double beta)
    {
        OpenUnit(p0, nameof(p0));
        OpenUnit(p1, nameof(p1));
        if (!(p1 > p0))
        {
            throw new ArgumentOutOfRangeException(nameof(p1), p1, "Must exceed p0.");
        }

        OpenUnit(alpha, nameof(alpha));
        OpenUnit(beta, nameof(beta));
    }

    public static void NonNegative(int value, string name)
    {
        if (value < 0)
        {
            throw new ArgumentOutOfRangeException(name, value, "Must not be negative.");
        }
    }

    public static void Count(int successes, int trials, string successesName, string trialsName)
    {
        NonNegative(trials, trialsName);
        if (successes < 0 || successes > trials)
        {
            throw new ArgumentOutOfRangeException(successesName, successes, $"Must lie in [0, {trialsName}].");
        }
    }

    /// <summary>The two-sided normal critical value Φ⁻¹(1 − (1 − confidence)/2).</summary>
    public static double TwoSidedZ(double confidence) => Normal.InvCDF(0.0, 1.0, 0.5 + (0.5 * confidence));
}
