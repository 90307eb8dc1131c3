using ScottPlot;

namespace TeachServe.Plots;

/// <summary>Observed points, optionally with an interval each (e.g. Wilson 95 %); an empty label draws no legend.</summary>
public sealed record CalibrationSeries(
    string Label, IReadOnlyList<double> Predicted, IReadOnlyList<double> Observed,
    IReadOnlyList<double>? Low = null, IReadOnlyList<double>? High = null);

/// <summary>
/// Predicted against observed error with the diagonal that perfect calibration would follow: the fit's reliability
/// diagram (one point per bin) and the console's released annotators (one point each).
/// </summary>
public static class CalibrationFigure
{
    /// <summary>
    /// Both axes share one range, so the diagonal runs corner to corner: from just below 0 (a point at 0, no test
    /// mistakes, is drawn whole) to a round number above every point, interval and the target.
    /// </summary>
    public static Plot Draw(string title, string predictedLabel, string observedLabel, CalibrationSeries series, double? targetError)
    {
        ArgumentNullException.ThrowIfNull(series);
        var plot = PlotTheme.Create(title, predictedLabel, observedLabel);
        var range = AxisRanges.Rate(series.Predicted.Concat(series.Observed).Concat(series.High ?? []).Append(targetError ?? double.NaN));
        var style = SeriesStyles.Neutral;
        if (series.Low is not null && series.High is not null) Marks.Intervals(plot, style, series.Predicted, series.Low, series.High);
        Marks.Points(plot, style with { Color = style.Color.WithAlpha(0.8) }, series.Predicted, series.Observed);
        Marks.Reference(plot, 0, 0, range.High, range.High, "predicted = observed", labelAt: 0.7);
        if (targetError is { } target && double.IsFinite(target))
        {
            Marks.Reference(plot, 0, target, range.High, target, $"target error {target:0.###}");
        }
        var shown = range.WithRoomBelow();
        plot.Axes.SetLimits(shown.Low, shown.High, shown.Low, shown.High);
        PlotTheme.Legend(plot, series.Predicted.Count == 0 ? [] : [PlotTheme.PointItem(series.Label, style)]);
        return plot;
    }
}
