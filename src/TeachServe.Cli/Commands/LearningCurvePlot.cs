using TeachServe.Core.Simulation;

namespace TeachServe.Cli.Commands;

/// <summary>Learning curves (mean true error by teaching step, with 95 % bands) drawn with ScottPlot.</summary>
internal static class LearningCurvePlot
{
    /// <summary>Writes <paramref name="pathWithoutExtension"/>.png and .svg.</summary>
    public static void Save(IReadOnlyList<SimulationResult> results, string title, double targetError, string pathWithoutExtension)
    {
        var plot = new ScottPlot.Plot();
        var palette = new ScottPlot.Palettes.Category10();
        for (var i = 0; i < results.Count; i++)
        {
            var r = results[i];
            var xs = r.Curve.Select(p => (double)p.Step).ToArray();
            var color = palette.GetColor(i);
            var band = plot.Add.FillY(xs, r.Curve.Select(p => p.Low).ToArray(), r.Curve.Select(p => p.High).ToArray());
            band.FillColor = color.WithAlpha(0.15);
            band.LineWidth = 0;
            var line = plot.Add.Scatter(xs, r.Curve.Select(p => p.MeanTrueError).ToArray());
            line.Color = color;
            line.MarkerSize = 0;
            line.LineWidth = 2;
            line.LegendText = r.Policy;
        }

        var target = plot.Add.HorizontalLine(targetError);
        target.LinePattern = ScottPlot.LinePattern.Dashed;
        target.Color = ScottPlot.Colors.Gray;
        target.LegendText = "target error";
        plot.Title($"{title}: simulated learners ({SimulateCommand.VariantName(results[0].Variant)}, n = {results[0].Learners})");
        plot.XLabel("teaching items shown");
        plot.YLabel("mean true error of the held rule");
        plot.Axes.SetLimitsY(0, Math.Max(0.05, results.Max(r => r.Curve.Count == 0 ? 0 : r.Curve.Max(p => p.High)) * 1.05));
        plot.ShowLegend(ScottPlot.Alignment.UpperRight);
        plot.SavePng(pathWithoutExtension + ".png", 900, 560);
        plot.SaveSvg(pathWithoutExtension + ".svg", 900, 560);
    }
}
