using TeachServe.Core.Experiments;
using TeachServe.Plots;

namespace TeachServe.Server.Experiments;

/// <summary>The report's figures: learning curves per arm, and the per-annotator test-error distribution per arm.</summary>
public static class ExperimentPlots
{
    public const string LearningCurves = "learning-curves";
    public const string TestError = "test-error";
    public static readonly IReadOnlyList<string> Names = [LearningCurves, TestError];

    /// <summary>Each arm is drawn in its policy's fixed style (<see cref="SeriesStyles.ForArms"/>).</summary>
    public static ScottPlot.Plot Draw(string name, ExperimentReportResult report, ExperimentDefinition definition)
    {
        ArgumentNullException.ThrowIfNull(report);
        ArgumentNullException.ThrowIfNull(definition);
        var styles = SeriesStyles.ForArms(definition.Arms.Select(a => a.Policy).ToArray());
        return name == LearningCurves ? Curves(report, styles) : Histogram(report, styles);
    }

    private static ScottPlot.Plot Curves(ExperimentReportResult report, IReadOnlyList<SeriesStyle> styles) =>
        Plots.LearningCurves.Draw($"{report.Experiment}: predicted error by teaching step", "mean predicted error",
            report.Arms.Where(a => a.LearningCurve.Count > 0).Select(a => new CurveSeries(
                $"{a.Name} (n = {a.Started})", styles[a.Arm],
                a.LearningCurve.Select(p => (double)p.Step).ToArray(),
                a.LearningCurve.Select(p => p.MeanPredictedError).ToArray(),
                a.LearningCurve.Select(p => p.Low).ToArray(),
                a.LearningCurve.Select(p => p.High).ToArray())).ToList(),
            targetError: null);

    /// <summary>Each 0.05-wide bin holds one bar per arm, side by side in arm order, with a gap between bins.</summary>
    private static ScottPlot.Plot Histogram(ExperimentReportResult report, IReadOnlyList<SeriesStyle> styles)
    {
        var plot = PlotTheme.Create($"{report.Experiment}: test error per annotator", "test error (bins of 0.05)", "annotators");
        var filled = report.Arms.SelectMany(a => a.TestErrorHistogram).Where(b => b.Count > 0).ToArray();
        // Test errors mostly sit in the lowest bins; the axis ends at the last bin holding anyone, not at 1.
        var errors = AxisRanges.Rate(filled.Select(b => b.High), atLeast: 0.25);
        var counts = AxisRanges.Count(filled.Select(b => (double)b.Count + 1));
        var width = 0.8 * 0.05 / Math.Max(1, report.Arms.Count);
        foreach (var arm in report.Arms)
        {
            var bins = arm.TestErrorHistogram;
            Marks.Bars(plot, styles[arm.Arm], bins.Select(b => b.Low + (0.1 * 0.05) + (width * (arm.Arm + 0.5))).ToArray(),
                bins.Select(b => (double)b.Count).ToArray(), width * 0.9, markerLift: 0.04 * counts.High);
        }
        plot.Axes.SetLimits(errors.Low, errors.High, counts.Low, counts.High);
        PlotTheme.IntegerTicks(plot.Axes.Left);
        PlotTheme.Legend(plot, report.Arms.Select(a => PlotTheme.BarItem($"{a.Name} (tested {a.Tested})", styles[a.Arm])));
        return plot;
    }
}
