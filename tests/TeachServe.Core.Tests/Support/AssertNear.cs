using System.Globalization;

namespace TeachServe.Core.Tests.Support;

/// <summary>
/// Tolerance-aware comparisons of doubles. Every check fails on NaN, so a method that silently returns NaN
/// cannot pass. Use <see cref="Decimals"/> or <see cref="SignificantDigits"/> to compare with a value as printed
/// in a paper or a program's output: the tolerance is then half a unit in the last printed digit.
/// </summary>
public static class AssertNear
{
    /// <summary>|actual − expected| ≤ tolerance.</summary>
    public static void Absolute(double expected, double actual, double tolerance, string? what = null)
    {
        if (!(tolerance >= 0))
        {
            throw new ArgumentOutOfRangeException(nameof(tolerance), tolerance, "Must be non-negative.");
        }

        if (!(Math.Abs(actual - expected) <= tolerance) && !(actual == expected))
        {
            Fail(expected, actual, $"absolute tolerance {Format(tolerance)}", what);
        }
    }

    /// <summary>|actual − expected| ≤ relativeTolerance·|expected|.</summary>
    public static void Relative(double expected, double actual, double relativeTolerance, string? what = null)
    {
        if (!(relativeTolerance >= 0))
        {
            throw new ArgumentOutOfRangeException(nameof(relativeTolerance), relativeTolerance, "Must be non-negative.");
        }

        if (!(Math.Abs(actual - expected) <= relativeTolerance * Math.Abs(expected)) && !(actual == expected))
        {
            Fail(expected, actual, $"relative tolerance {Format(relativeTolerance)}", what);
        }
    }

    /// <summary>
    /// <paramref name="expected"/> was printed with <paramref name="decimals"/> digits after the point:
    /// <paramref name="actual"/> must round to it, i.e. lie within half a unit of the last digit.
    /// </summary>
    public static void Decimals(double expected, double actual, int decimals, string? what = null) =>
        Absolute(expected, actual, HalfUnit(-decimals), what);

    /// <summary>
    /// <paramref name="expected"/> was printed with <paramref name="digits"/> significant digits:
    /// <paramref name="actual"/> must lie within half a unit of the last of them.
    /// </summary>
    public static void SignificantDigits(double expected, double actual, int digits, string? what = null)
    {
        if (expected == 0)
        {
            throw new ArgumentOutOfRangeException(nameof(expected), "Zero has no significant digits; use Absolute.");
        }

        var exponent = (int)Math.Floor(Math.Log10(Math.Abs(expected)));
        Absolute(expected, actual, HalfUnit(exponent - digits + 1), what);
    }

    // A hair above half a unit, so that a printed value that is itself the rounding of a tie still passes.
    private static double HalfUnit(int exponent) => 0.5 * Math.Pow(10, exponent) * (1 + 1e-9);

    private static void Fail(double expected, double actual, string rule, string? what)
    {
        var subject = what is null ? string.Empty : what + ": ";
        Assert.Fail($"{subject}expected {Format(expected)}, actual {Format(actual)} " +
                    $"(difference {Format(actual - expected)}, {rule})");
    }

    private static string Format(double x) => x.ToString("R", CultureInfo.InvariantCulture);
}
