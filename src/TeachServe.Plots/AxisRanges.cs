namespace TeachServe.Plots;

/// <summary>An axis range, lower to upper.</summary>
public readonly record struct AxisRange(double Low, double High)
{
    public bool Contains(double value) => value >= Low && value <= High;

    /// <summary>
    /// The range with a sliver below <see cref="Low"/>, so that a line or marker at exactly the lower end (an error of
    /// 0) is drawn whole rather than half hidden by the axis; for rates, never for counts, whose bars stand on 0.
    /// </summary>
    public AxisRange WithRoomBelow() => this with { Low = Low - (0.02 * (High - Low)) };
}

/// <summary>
/// Axis ranges chosen from the data instead of the library's automatic fit: rates from 0 (a difference between two
/// curves looks as large as it is), counts from 0, an upper end on a round number above every value drawn (bands
/// included), never a range that cuts data off.
/// </summary>
public static class AxisRanges
{
    /// <summary>
    /// An error rate or other proportion: [0, a round number at or above the largest value, at most 1]. Non-finite
    /// values (an undefined band) are skipped; with nothing finite the whole [0, 1].
    /// </summary>
    public static AxisRange Rate(IEnumerable<double> values, double atLeast = 0.05)
    {
        var max = Max(values);
        if (double.IsNaN(max)) return new(0, 1);
        return new(0, Math.Min(1, RoundUp(Math.Max(atLeast, max * 1.04))));
    }

    /// <summary>A count (annotators, items): [0, a round number above the largest count], at least 1.</summary>
    public static AxisRange Count(IEnumerable<double> values)
    {
        var max = Max(values);
        return new(0, double.IsNaN(max) || max <= 0 ? 1 : RoundUp(max * 1.08));
    }

    /// <summary>Teaching steps or items: [0, the largest value], at least <paramref name="atLeast"/> wide so one step is not the whole picture.</summary>
    public static AxisRange Steps(IEnumerable<double> values, double atLeast = 5)
    {
        var max = Max(values);
        return new(0, double.IsNaN(max) ? atLeast : Math.Max(atLeast, max));
    }

    /// <summary>
    /// <paramref name="value"/> rounded up to a multiple of a tenth of its power of ten below 2.5 × 10^k and of a half
    /// above (0.123 → 0.13, 0.47 → 0.5, 24.8 → 25, 137 → 140); 1 for a value that is not positive.
    /// </summary>
    public static double RoundUp(double value)
    {
        if (!(value > 0) || !double.IsFinite(value)) return 1;
        var magnitude = Math.Pow(10, Math.Floor(Math.Log10(value)));
        var step = value / magnitude < 2.5 ? magnitude / 10 : magnitude / 2;
        // Rounding the quotient first keeps 0.12 / 0.01 = 12.000000000000002 from going up to 13.
        var rounded = Math.Ceiling(Math.Round(value / step, 9)) * step;
        return Math.Round(rounded, 12);
    }

    private static double Max(IEnumerable<double> values)
    {
        ArgumentNullException.ThrowIfNull(values);
        var max = double.NaN;
        foreach (var v in values)
        {
            if (double.IsFinite(v) && !(v <= max)) max = v;
        }
        return max;
    }
}
