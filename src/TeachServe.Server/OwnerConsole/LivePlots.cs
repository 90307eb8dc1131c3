using ScottPlot;
using TeachServe.Plots;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// One annotator's live error over their checks: over the last <see cref="LiveConsoleReads.Window"/> checks with its
/// Wilson 95 % band, cumulative since the monitor started, the model view's predicted answer error, the target answer error p0 as the dashed reference, and the
/// drift alarms as markers. Drawn for a wide screen and for a phone, whose picture is narrower with the legend below,
/// so that its text is not scaled down to a size nobody can read.
/// </summary>
public static class LivePlots
{
    /// <summary>The phone picture, shown at its own width on a 390-pixel screen.</summary>
    public static readonly PlotSize Phone = new(360, 360);

    public static readonly SeriesStyle Moving = new(OkabeIto.Blue, MarkerShape.FilledCircle);
    public static readonly SeriesStyle Cumulative = new(OkabeIto.Black, MarkerShape.FilledSquare);
    public static readonly SeriesStyle Model = new(OkabeIto.Orange, MarkerShape.OpenDiamond);
    public static readonly SeriesStyle Alarm = new(OkabeIto.Vermillion, MarkerShape.FilledTriangleDown);

    public static Plot LiveError(IReadOnlyList<LivePoint> points, double targetAnswerError, bool phone)
    {
        var plot = PlotTheme.Create(phone ? "Live error" : "Live error by check", "live check", "answer error");
        PlotTheme.IntegerTicks(plot.Axes.Bottom);
        var xs = points.Select(p => (double)p.Check).ToArray();
        Marks.Band(plot, Moving, xs, points.Select(p => p.WindowLow).ToArray(), points.Select(p => p.WindowHigh).ToArray());
        Marks.Line(plot, Moving, xs, points.Select(p => p.Window).ToArray(), 0, 2);
        Marks.Line(plot, Cumulative, xs, points.Select(p => p.Cumulative).ToArray(), 1, 3);
        Marks.Line(plot, Model, xs, points.Select(p => p.ModelError).ToArray(), 2, 3);
        var alarms = points.Where(p => p.Alarm).ToList();
        var x = AxisRanges.Steps(xs, atLeast: 10);
        var y = AxisRanges.Rate(points.Select(p => p.WindowHigh).Concat(points.Select(p => p.ModelError)).Append(targetAnswerError));
        // Alarms sit on the top edge, where no line runs under them, each straight above its check.
        var top = y.High * 0.96;
        Marks.Points(plot, Alarm, alarms.Select(p => (double)p.Check).ToArray(), alarms.Select(_ => top).ToArray(), Marks.MarkerSize + 3);
        Marks.Reference(plot, x.Low, targetAnswerError, x.High, targetAnswerError, $"target p0 {targetAnswerError:0.###}");
        // A sliver to the right, so that an alarm at the last check is drawn whole.
        plot.Axes.SetLimits(x.Low, x.High * 1.015, y.WithRoomBelow().Low, y.High);
        // The legend goes below the data (PlotTheme's place, on the right, would leave the narrow phone picture no room).
        var legend = plot.Legend;
        legend.DisplayPlottableLegendItems = false;
        legend.ManualItems.Clear();
        legend.ManualItems.Add(PlotTheme.LineItem($"last {LiveConsoleReads.Window} checks (95 % band)", Moving));
        legend.ManualItems.Add(PlotTheme.LineItem("since monitoring began", Cumulative));
        legend.ManualItems.Add(PlotTheme.LineItem("model view (predicted)", Model));
        if (alarms.Count > 0) legend.ManualItems.Add(PlotTheme.PointItem("drift alarm", Alarm));
        legend.FontName = PlotTheme.Face;
        legend.SetBestFontOnEachRender = false;
        legend.FontSize = phone ? 11 : 12;
        legend.FontColor = PlotTheme.Ink;
        legend.OutlineColor = PlotTheme.GridLine;
        legend.OutlineWidth = 1;
        legend.ShadowColor = Colors.Transparent;
        legend.BackgroundColor = Colors.White;
        legend.Orientation = Orientation.Horizontal;
        plot.ShowLegend(Edge.Bottom).Alignment = Alignment.UpperCenter;
        return plot;
    }
}
