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
