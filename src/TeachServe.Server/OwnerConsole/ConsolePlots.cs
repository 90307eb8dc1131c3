using TeachServe.Plots;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// The console's three pictures, drawn with the shared plotting helper and sent as SVG (no script, nothing for the
/// browser to fetch, the same picture in every browser). Each page also lists the numbers behind a picture in a table.
/// The pictures pool every recent session, whatever policy it ran, so their one series is in the neutral style and,
/// named by the caption beside it, needs no legend.
/// </summary>
public static class ConsolePlots
{
    public static readonly int Width = PlotSize.Console.Width;
    public static readonly int Height = PlotSize.Console.Height;
    public static readonly IReadOnlyList<string> Names = ["calibration.svg", "learning-curve.svg", "items-to-release.svg"];

    /// <summary>
    /// Predicted error at the end of teaching against the error observed on the test, one point per tested annotator
    /// (released or not), with the observed error's 95 % Wilson interval.
    /// </summary>
    public static ScottPlot.Plot Calibration(IReadOnlyList<CalibrationPoint> points, double targetError)
    {
        var withIntervals = points.All(p => double.IsFinite(p.Low) && double.IsFinite(p.High));
        return CalibrationFigure.Draw("Predicted vs observed error (all tested)", "predicted error when teaching ended", "observed test error",
            new CalibrationSeries("", points.Select(p => p.Predicted).ToArray(), points.Select(p => p.Observed).ToArray(),
                withIntervals ? points.Select(p => p.Low).ToArray() : null, withIntervals ? points.Select(p => p.High).ToArray() : null),
            targetError);
    }

    /// <summary>Mean predicted error after each teaching step, starting from the prior's error at step 0, with the target.</summary>
    public static ScottPlot.Plot LearningCurve(IReadOnlyList<CurvePoint> curve, double startingError, double targetError) =>
        LearningCurves.Draw("Learning curve", "mean predicted error",
            [new CurveSeries("", SeriesStyles.Neutral,
                curve.Select(c => (double)c.TeachingStep).Prepend(0).ToArray(),
                curve.Select(c => c.MeanPredictedError).Prepend(startingError).ToArray())],
            targetError);

    /// <summary>How many items (teaching and test answers) released annotators needed; items and annotators both from 0.</summary>
    public static ScottPlot.Plot ItemsToRelease(IReadOnlyList<int> items)
    {
        var plot = PlotTheme.Create("Items answered until release", "items answered (teaching + test)", "released annotators");
        PlotTheme.IntegerTicks(plot.Axes.Bottom);
        PlotTheme.IntegerTicks(plot.Axes.Left);
        if (items.Count == 0)
        {
            plot.Axes.SetLimits(0, 50, 0, 1);
            return plot;
        }
        var (low, width, counts) = Bins(items);
        Marks.Bars(plot, SeriesStyles.Neutral, counts.Select((_, i) => low + ((i + 0.5) * width)).ToArray(), counts.Select(c => (double)c).ToArray(),
            width * 0.9, markerLift: null);
        // At least ten items wide, so one bar does not fill the picture.
        var x = AxisRanges.Count([Math.Max(10, low + (width * counts.Length))]);
        var y = AxisRanges.Count(counts.Select(c => (double)c));
        plot.Axes.SetLimits(x.Low, x.High, y.Low, y.High);
        return plot;
    }

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
}
