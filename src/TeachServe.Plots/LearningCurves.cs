using ScottPlot;

namespace TeachServe.Plots;

/// <summary>
/// One learning curve: a value (mean error) after each number of teaching items, with an optional 95 % band; an empty
/// label has no legend entry.
/// </summary>
/// <param name="Low">Lower band edge per point; NaN where the band is undefined (fewer than two annotators).</param>
public sealed record CurveSeries(
    string Label, SeriesStyle Style, IReadOnlyList<double> Steps, IReadOnlyList<double> Values,
    IReadOnlyList<double>? Low = null, IReadOnlyList<double>? High = null);

/// <summary>
/// The learning-curve figure, drawn here only: simulation results (CLI <c>simulate --compare</c> and the simulations
/// API), experiment arms and the console's curve all come through <see cref="Draw(string, string, IReadOnlyList{CurveSeries}, double?)"/>.
/// </summary>
public static class LearningCurves
{
    public const string StepsLabel = "teaching items shown";

    /// <summary>
    /// Steps from 0 to the longest curve, error from 0 to a round number above every value and band edge (and the
    /// target), the target as a labelled dashed line, the legend beside the data.
    /// </summary>
    public static Plot Draw(string title, string errorLabel, IReadOnlyList<CurveSeries> series, double? targetError)
    {
        ArgumentNullException.ThrowIfNull(series);
        var plot = PlotTheme.Create(title, StepsLabel, errorLabel);
        // A normal band (mean ± 1.96 s/√n) of an error near 0 or 1 reaches past it, where no error lies: it is drawn
        // within [0, 1] and does not stretch the axis.
        series = [.. series.Select(s => s with
        {
            Low = s.Low?.Select(v => Math.Max(0, v)).ToArray(),
            High = s.High?.Select(v => Math.Min(1, v)).ToArray(),
        })];
        foreach (var s in series)
        {
            if (s.Low is not null && s.High is not null) Marks.Band(plot, s.Style, s.Steps, s.Low, s.High);
        }
        for (var i = 0; i < series.Count; i++)
        {
            Marks.Line(plot, series[i].Style, series[i].Steps, series[i].Values, i, series.Count);
        }
        var x = AxisRanges.Steps(series.SelectMany(s => s.Steps));
        var y = AxisRanges.Rate(series.SelectMany(s => s.Values.Concat(s.High ?? [])).Append(targetError ?? double.NaN));
        if (targetError is { } target && double.IsFinite(target))
        {
            Marks.Reference(plot, x.Low, target, x.High, target, $"target error {target:0.###}");
        }
        plot.Axes.SetLimits(x.Low, x.High, y.WithRoomBelow().Low, y.High);
        PlotTheme.IntegerTicks(plot.Axes.Bottom);
        PlotTheme.Legend(plot, series.Where(s => s.Steps.Count > 0).Select(s => PlotTheme.LineItem(s.Label, s.Style)));
        return plot;
    }
}
