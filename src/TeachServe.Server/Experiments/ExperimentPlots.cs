using TeachServe.Core.Experiments;

namespace TeachServe.Server.Experiments;

/// <summary>The report's figures: learning curves per arm, and the per-annotator test-error distribution per arm.</summary>
public static class ExperimentPlots
{
    public const string LearningCurves = "learning-curves";
    public const string TestError = "test-error";
    public static readonly IReadOnlyList<string> Names = [LearningCurves, TestError];

    public static ScottPlot.Plot Draw(string name, ExperimentReportResult report) =>
        name == LearningCurves ? Curves(report) : Histogram(report);

    private static ScottPlot.Plot Curves(ExperimentReportResult report)
    {
        var plot = new ScottPlot.Plot();
        var palette = new ScottPlot.Palettes.Category10();
        foreach (var arm in report.Arms)
        {
            var points = arm.LearningCurve;
            if (points.Count == 0) continue;
            var color = palette.GetColor(arm.Arm);
            var xs = points.Select(p => (double)p.Step).ToArray();
            var banded = points.Where(p => double.IsFinite(p.Low)).ToArray();
            if (banded.Length > 1)
            {
                var band = plot.Add.FillY(
                    banded.Select(p => (double)p.Step).ToArray(), banded.Select(p => p.Low).ToArray(), banded.Select(p => p.High).ToArray());
                band.FillColor = color.WithAlpha(0.15);
                band.LineWidth = 0;
            }
            var line = plot.Add.Scatter(xs, points.Select(p => p.MeanPredictedError).ToArray());
            line.Color = color;
            line.MarkerSize = 0;
            line.LineWidth = 2;
            line.LegendText = $"{arm.Name} (n = {arm.Started})";
        }
        plot.Title($"{report.Experiment}: predicted error by teaching step");
        plot.XLabel("teaching items shown");
        plot.YLabel("mean predicted error");
        plot.Axes.SetLimitsY(0, 1);
        plot.ShowLegend(ScottPlot.Alignment.UpperRight);
        return plot;
    }

    private static ScottPlot.Plot Histogram(ExperimentReportResult report)
    {
        var plot = new ScottPlot.Plot();
        var palette = new ScottPlot.Palettes.Category10();
        var arms = report.Arms.Count;
        foreach (var arm in report.Arms)
        {
            var color = palette.GetColor(arm.Arm);
            var width = 0.05 / arms;
            var bars = arm.TestErrorHistogram.Select(b => new ScottPlot.Bar
            {
                Position = b.Low + (width * (arm.Arm + 0.5)),
                Value = b.Count,
                Size = width * 0.9,
                FillColor = color,
            }).ToList();
            var series = plot.Add.Bars(bars);
            series.LegendText = $"{arm.Name} (tested {arm.Tested})";
        }
        plot.Title($"{report.Experiment}: test error per annotator");
        plot.XLabel("test error (bins of 0.05)");
        plot.YLabel("annotators");
        plot.Axes.SetLimitsX(0, 1);
        plot.ShowLegend(ScottPlot.Alignment.UpperRight);
        return plot;
    }
}
