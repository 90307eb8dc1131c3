using ScottPlot;

namespace TeachServe.Plots;

/// <summary>
/// The few marks TeachServe draws, each in a series' <see cref="SeriesStyle"/>. Dashes are drawn as gaps in the data
/// (NaN breaks a line), not as a line pattern: the SVG writer cannot express a pattern and warns on every picture.
/// </summary>
public static class Marks
{
    public const float LineWidth = 2.5f;
    public const float MarkerSize = 8;
    private const int MarkersPerLine = 8;
    private const double BandOpacity = 0.16;
    /// <summary>Bars are areas: a little lighter than lines, so that black (neutral) bars do not weigh like ink.</summary>
    public const double BarOpacity = 0.8;

    /// <summary>
    /// A line with about eight markers of its style along it (a marker on every point would bury a long curve). The
    /// markers of the <paramref name="index"/>-th of <paramref name="count"/> lines are staggered so that lines which
    /// run together still show every marker, and none sits on the first point, which lies on the axis.
    /// </summary>
    public static void Line(Plot plot, SeriesStyle style, IReadOnlyList<double> xs, IReadOnlyList<double> ys, int index = 0, int count = 1)
    {
        ArgumentNullException.ThrowIfNull(plot);
        ArgumentNullException.ThrowIfNull(xs);
        ArgumentNullException.ThrowIfNull(ys);
        if (xs.Count == 0) return;
        var line = plot.Add.Scatter(xs.ToArray(), ys.ToArray());
        line.Color = style.Color;
        line.LineWidth = LineWidth;
        line.MarkerSize = 0;
        var stride = Math.Max(1, (int)Math.Ceiling(xs.Count / (double)MarkersPerLine));
        var first = Math.Min(xs.Count - 1, 1 + (index * stride / Math.Max(1, count)));
        var marked = Enumerable.Range(0, xs.Count).Where(i => i >= first && (i - first) % stride == 0).ToArray();
        Points(plot, style, marked.Select(i => xs[i]).ToArray(), marked.Select(i => ys[i]).ToArray());
    }

    /// <summary>Markers only.</summary>
    public static void Points(Plot plot, SeriesStyle style, IReadOnlyList<double> xs, IReadOnlyList<double> ys, float size = MarkerSize)
    {
        ArgumentNullException.ThrowIfNull(plot);
        if (xs.Count == 0) return;
        var points = plot.Add.ScatterPoints(xs.ToArray(), ys.ToArray());
        points.MarkerShape = style.Marker;
        points.MarkerSize = size;
        points.MarkerFillColor = style.Color;
        points.MarkerLineColor = style.Color;
        points.MarkerLineWidth = 1.5f;
    }

    /// <summary>A translucent band between <paramref name="low"/> and <paramref name="high"/>; points where either is not finite are left out.</summary>
    public static void Band(Plot plot, SeriesStyle style, IReadOnlyList<double> xs, IReadOnlyList<double> low, IReadOnlyList<double> high)
    {
        ArgumentNullException.ThrowIfNull(plot);
        var keep = Enumerable.Range(0, xs.Count).Where(i => double.IsFinite(low[i]) && double.IsFinite(high[i])).ToArray();
        if (keep.Length < 2) return;
        var band = plot.Add.FillY(keep.Select(i => xs[i]).ToArray(), keep.Select(i => low[i]).ToArray(), keep.Select(i => high[i]).ToArray());
        band.FillColor = style.Color.WithAlpha(BandOpacity);
        band.LineWidth = 0;
    }

    /// <summary>Vertical interval bars (e.g. Wilson intervals, which are asymmetric), one per x.</summary>
    public static void Intervals(Plot plot, SeriesStyle style, IReadOnlyList<double> xs, IReadOnlyList<double> low, IReadOnlyList<double> high)
    {
        ArgumentNullException.ThrowIfNull(plot);
        var ys = new List<double>();
        var xs2 = new List<double>();
        for (var i = 0; i < xs.Count; i++)
        {
            xs2.AddRange([xs[i], xs[i], double.NaN]);
            ys.AddRange([low[i], high[i], double.NaN]);
        }
        if (xs2.Count == 0) return;
        var bars = plot.Add.Scatter(xs2.ToArray(), ys.ToArray());
        bars.Color = style.Color;
        bars.LineWidth = 1.5f;
        bars.MarkerSize = 0;
    }

    /// <summary>
    /// Bars of one series, <paramref name="width"/> wide at the given centres. Where several series share the bins,
    /// each non-empty bar has the style's marker <paramref name="markerLift"/> (data units) above it as the second cue;
    /// a lone series (<see langword="null"/>) needs none.
    /// </summary>
    public static void Bars(Plot plot, SeriesStyle style, IReadOnlyList<double> centres, IReadOnlyList<double> values, double width, double? markerLift)
    {
        ArgumentNullException.ThrowIfNull(plot);
        if (centres.Count == 0) return;
        plot.Add.Bars(centres.Select((c, i) => new Bar
        {
            Position = c,
            Value = values[i],
            Size = width,
            FillColor = style.Color.WithAlpha(BarOpacity),
            LineWidth = 0,
        }).ToList());
        if (markerLift is not { } lift) return;
        var tops = Enumerable.Range(0, centres.Count).Where(i => values[i] > 0).ToArray();
        Points(plot, style, tops.Select(i => centres[i]).ToArray(), tops.Select(i => values[i] + lift).ToArray(), MarkerSize - 1);
    }

    /// <summary>
    /// A dashed grey reference line from (x0, y0) to (x1, y1) with <paramref name="label"/> written on a white ground:
    /// by default above its right end (curves start high at the left and flatten out towards the target at the right);
    /// with <paramref name="labelAt"/> &lt; 1, that far along the line and below-right of it (for a rising line, whose
    /// right end is the figure's corner).
    /// </summary>
    public static void Reference(Plot plot, double x0, double y0, double x1, double y1, string label, double labelAt = 1)
    {
        ArgumentNullException.ThrowIfNull(plot);
        ArgumentNullException.ThrowIfNull(label);
        const int dashes = 45;
        var xs = new List<double>();
        var ys = new List<double>();
        for (var k = 0; k < dashes; k++)
        {
            double a = k / (double)dashes, b = (k + 0.6) / dashes;
            xs.AddRange([x0 + (a * (x1 - x0)), x0 + (b * (x1 - x0)), double.NaN]);
            ys.AddRange([y0 + (a * (y1 - y0)), y0 + (b * (y1 - y0)), double.NaN]);
        }
        var line = plot.Add.Scatter(xs.ToArray(), ys.ToArray());
        line.Color = SeriesStyles.Reference;
        line.LineWidth = 1.5f;
        line.MarkerSize = 0;
        if (label.Length == 0) return;
        var text = plot.Add.Text(label, x0 + (labelAt * (x1 - x0)), y0 + (labelAt * (y1 - y0)));
        text.LabelFontName = PlotTheme.Face;
        text.LabelFontColor = PlotTheme.Ink;
        text.LabelFontSize = 11;
        text.LabelBackgroundColor = Colors.White.WithAlpha(0.85);
        text.LabelPadding = 2;
        text.LabelAlignment = labelAt < 1 ? Alignment.UpperLeft : Alignment.LowerRight;
        text.LabelOffsetX = labelAt < 1 ? 8 : 0;
        text.LabelOffsetY = -2;
    }
}
