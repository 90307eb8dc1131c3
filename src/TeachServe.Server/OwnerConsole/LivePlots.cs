using ScottPlot;
using TeachServe.Plots;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// One annotator's live error over their checks: over the last <see cref="LiveConsoleReads.Window"/> checks with its
/// Wilson 95 % band, cumulative since the monitor started, the target answer error p0 as the dashed reference, and the
/// drift alarms as markers. Drawn for a wide screen and for a phone, whose picture is narrower with the legend below,
/// so that its text is not scaled down to a size nobody can read.
/// </summary>
public static class LivePlots
{
    /// <summary>The phone picture, shown at its own width on a 390-pixel screen.</summary>
    public static readonly PlotSize Phone = new(360, 330);

    public static readonly SeriesStyle Moving = new(OkabeIto.Blue, MarkerShape.FilledCircle);
    public static readonly SeriesStyle Cumulative = new(OkabeIto.Black, MarkerShape.FilledSquare);
    public static readonly SeriesStyle Alarm = new(OkabeIto.Vermillion, MarkerShape.FilledTriangleDown);

    public static Plot LiveError(IReadOnlyList<LivePoint> points, double targetAnswerError, bool phone)
    {
        var plot = PlotTheme.Create(phone ? "Live error" : "Live error by check", "live check", "answer error");
        PlotTheme.IntegerTicks(plot.Axes.Bottom);
        var xs = points.Select(p => (double)p.Check).ToArray();
        Marks.Band(plot, Moving, xs, points.Select(p => p.WindowLow).ToArray(), points.Select(p => p.WindowHigh).ToArray());
        Marks.Line(plot, Moving, xs, points.Select(p => p.Window).ToArray(), 0, 2);
        Marks.Line(plot, Cumulative, xs, points.Select(p => p.Cumulative).ToArray(), 1, 2);
        var alarms = points.Where(p => p.Alarm).ToList();
        var x = AxisRanges.Steps(xs, atLeast: 10);
        var y = AxisRanges.Rate(points.Select(p => p.WindowHigh).Append(targetAnswerError));
        // Alarms sit on the top edge, where no line runs under them, each straight above its check.
        var top = y.High * 0.96;
        Marks.Points(plot, Alarm, alarms.Select(p => (double)p.Check).ToArray(), alarms.Select(_ => top).ToArray(), Marks.MarkerSize + 3);
        Marks.Reference(plot, x.Low, targetAnswerError, x.High, targetAnswerError, $"target p0 {targetAnswerError:0.###}");
        plot.Axes.SetLimits(x.Low, x.High, y.WithRoomBelow().Low, y.High);
        PlotTheme.Legend(plot,
        [
            PlotTheme.LineItem($"last {LiveConsoleReads.Window} checks (95 % band)", Moving),
            PlotTheme.LineItem("since monitoring began", Cumulative),
            .. alarms.Count > 0 ? [PlotTheme.PointItem("drift alarm", Alarm)] : Array.Empty<LegendItem>(),
        ]);
        if (phone)
        {
            plot.Legend.Orientation = Orientation.Horizontal;
            plot.ShowLegend(Edge.Bottom).Alignment = Alignment.UpperCenter;
            plot.Legend.FontSize = 11;
        }
        return plot;
    }
}
