using System.Text.RegularExpressions;
using ScottPlot;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// The console's three pictures, drawn on the server with ScottPlot as SVG (no script, nothing for the browser to
/// fetch, the same picture in every browser). Each page also lists the numbers behind a picture in a table.
/// </summary>
public static partial class ConsolePlots
{
    public const int Width = 560;
    public const int Height = 360;
    private static readonly Color Ink = Color.FromHex("#1b2230");
    private static readonly Color Accent = Color.FromHex("#1d5bb8");
    private static readonly Color Muted = Color.FromHex("#5a6478");
    private static readonly Color Grid = Color.FromHex("#e3e6ec");

    /// <summary>Predicted error at the end of teaching against the error observed on the test, one point per released annotator.</summary>
    public static string Calibration(IReadOnlyList<CalibrationPoint> points, double targetError)
    {
        var plot = NewPlot("Predicted vs observed error (released annotators)", "predicted error when teaching ended", "observed test error");
        var max = Math.Max(targetError * 2, points.Count == 0 ? 0.3 : Math.Max(points.Max(p => p.Predicted), points.Max(p => p.Observed)) * 1.15);
        max = Math.Min(1, Math.Max(0.05, max));
        var diagonal = plot.Add.Line(0, 0, max, max);
        diagonal.Color = Muted;
        diagonal.LinePattern = LinePattern.Dashed;
        diagonal.LegendText = "predicted = observed";
        var target = plot.Add.HorizontalLine(targetError);
        target.Color = Color.FromHex("#17703a");
        target.LinePattern = LinePattern.Dotted;
        target.LegendText = $"target {targetError:0.###}";
        if (points.Count > 0)
        {
            var dots = plot.Add.ScatterPoints(points.Select(p => p.Predicted).ToArray(), points.Select(p => p.Observed).ToArray());
            dots.Color = Accent.WithAlpha(0.8);
            dots.MarkerSize = 9;
            dots.LegendText = "one released annotator";
        }
        // A little room below zero, so an annotator with no test mistakes is not hidden behind the axis.
        plot.Axes.SetLimits(-max * 0.03, max, -max * 0.03, max);
        plot.ShowLegend(Alignment.UpperLeft);
        return Svg(plot);
    }

    /// <summary>Mean predicted error after each teaching step, with the target as a line.</summary>
    public static string LearningCurve(IReadOnlyList<CurvePoint> curve, double startingError, double targetError)
    {
        var plot = NewPlot("Learning curve", "teaching step", "mean predicted error");
        var xs = new List<double> { 0 };
        var ys = new List<double> { startingError };
        xs.AddRange(curve.Select(c => (double)c.TeachingStep));
        ys.AddRange(curve.Select(c => c.MeanPredictedError));
        var line = plot.Add.Scatter(xs.ToArray(), ys.ToArray());
        line.Color = Accent;
        line.LineWidth = 2.5f;
        line.MarkerSize = 5;
        line.LegendText = "mean predicted error";
        var target = plot.Add.HorizontalLine(targetError);
        target.Color = Color.FromHex("#17703a");
        target.LinePattern = LinePattern.Dotted;
        target.LegendText = $"target {targetError:0.###}";
        plot.Axes.SetLimits(0, Math.Max(5, xs[^1]), 0, Math.Min(1, Math.Max(startingError, ys.Max()) * 1.1));
        plot.Axes.Bottom.TickGenerator = IntegerTicks();
        plot.ShowLegend(Alignment.UpperRight);
        return Svg(plot);
    }

    /// <summary>How many items (teaching and test answers) released annotators needed.</summary>
    public static string ItemsToRelease(IReadOnlyList<int> items)
    {
        var plot = NewPlot("Items answered until release", "items answered (teaching + test)", "released annotators");
        if (items.Count > 0)
        {
            var (low, width, counts) = Bins(items);
            var bars = counts.Select((c, i) => new Bar
            {
                Position = low + (i + 0.5) * width,
                Value = c,
                Size = width * 0.9,
                FillColor = Accent,
                LineWidth = 0,
            }).ToList();
            plot.Add.Bars(bars);
            // At least ten items wide, so one bar does not fill the picture.
            var span = Math.Max(10, width * counts.Length);
            var middle = low + width * counts.Length / 2.0;
            plot.Axes.SetLimits(Math.Max(0, middle - span / 2.0 - 1), middle + span / 2.0 + 1, 0, counts.Max() * 1.15 + 0.5);
        }
        else
        {
            plot.Axes.SetLimits(0, 50, 0, 1);
        }
        plot.Axes.Bottom.TickGenerator = IntegerTicks();
        plot.Axes.Left.TickGenerator = IntegerTicks();
        return Svg(plot);
    }

    /// <summary>
    /// The SVG names the server's font; the browser may not have it and would fall back to a serif face, so the text
    /// asks for the console's own sans-serif stack instead (the layout was measured with a sans face too).
    /// </summary>
    private static string Svg(Plot plot) =>
        FontFamily().Replace(plot.GetSvgXml(Width, Height), "font-family=\"system-ui, 'DejaVu Sans', Arial, sans-serif\"");

    [GeneratedRegex("font-family=\"[^\"]*\"")]
    private static partial Regex FontFamily();

    private static ScottPlot.TickGenerators.NumericAutomatic IntegerTicks() => new() { IntegerTicksOnly = true, TargetTickCount = 6 };

    /// <summary>Integer-aligned bins, about ten of them.</summary>
    public static (double Low, double Width, int[] Counts) Bins(IReadOnlyList<int> values)
    {
        var min = values.Min();
        var max = values.Max();
        var width = Math.Max(1, (int)Math.Ceiling((max - min + 1) / 10.0));
        var counts = new int[(max - min) / width + 1];
        foreach (var v in values) counts[(v - min) / width]++;
        return (min - 0.5, width, counts);
    }

    private static Plot NewPlot(string title, string x, string y)
    {
        var plot = new Plot();
        plot.Font.Set(Fonts.Sans);
        plot.Title(title, size: 15);
        plot.XLabel(x, size: 13);
        plot.YLabel(y, size: 13);
        plot.Axes.Title.Label.ForeColor = Ink;
        plot.Axes.Color(Ink);
        plot.Grid.MajorLineColor = Grid;
        plot.FigureBackground.Color = Colors.White;
        plot.DataBackground.Color = Colors.White;
        return plot;
    }
}
