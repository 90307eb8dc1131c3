using System.Globalization;
using System.Text;
using TeachServe.Core.Simulation;

namespace TeachServe.Server.Simulations;

/// <summary>A finished simulation as CSV (one row per policy × variant) and as a learning-curve plot.</summary>
public static class SimulationOutputs
{
    public static string Csv(IReadOnlyList<SimulationResult> results)
    {
        var csv = new StringBuilder("policy,variant,learners,released,releaseRate,releasePrecision,unqualified,unqualifiedReleased,meanTeachingItems,meanTestItems,meanTeachingItemsToRelease,meanFinalTrueError\r\n");
        foreach (var r in results)
        {
            csv.AppendJoin(',', r.Policy, SimulationRequests.VariantName(r.Variant), N(r.Learners), N(r.Released), N(r.ReleaseRate),
                N(r.ReleasePrecision), N(r.Unqualified), N(r.UnqualifiedReleased), N(r.MeanTeachingItems), N(r.MeanTestItems),
                N(r.MeanTeachingItemsToRelease), N(r.MeanFinalTrueError)).Append("\r\n");
        }
        return csv.ToString();
    }

    private static string N(double x) => double.IsFinite(x) ? x.ToString("R", CultureInfo.InvariantCulture) : "";

    public static ScottPlot.Plot Plot(IReadOnlyList<SimulationResult> results, double targetError)
    {
        var plot = new ScottPlot.Plot();
        var palette = new ScottPlot.Palettes.Category10();
        for (var i = 0; i < results.Count; i++)
        {
            var r = results[i];
            if (r.Curve.Count == 0) continue;
            var xs = r.Curve.Select(p => (double)p.Step).ToArray();
            var color = palette.GetColor(i);
            var band = plot.Add.FillY(xs, r.Curve.Select(p => p.Low).ToArray(), r.Curve.Select(p => p.High).ToArray());
            band.FillColor = color.WithAlpha(0.15);
            band.LineWidth = 0;
            var line = plot.Add.Scatter(xs, r.Curve.Select(p => p.MeanTrueError).ToArray());
            line.Color = color;
            line.MarkerSize = 0;
            line.LineWidth = 2;
            line.LegendText = $"{r.Policy} ({SimulationRequests.VariantName(r.Variant)})";
        }
        var target = plot.Add.HorizontalLine(targetError);
        target.LinePattern = ScottPlot.LinePattern.Dashed;
        target.Color = ScottPlot.Colors.Gray;
        target.LegendText = "target error";
        plot.Title($"Simulated learners (n = {(results.Count > 0 ? results[0].Learners : 0)} per line)");
        plot.XLabel("teaching items shown");
        plot.YLabel("mean true error of the held rule");
        plot.Axes.SetLimitsY(0, 1);
        plot.ShowLegend(ScottPlot.Alignment.UpperRight);
        return plot;
    }
}
