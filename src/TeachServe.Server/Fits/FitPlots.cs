using TeachServe.Core.Fitting;

namespace TeachServe.Server.Fits;

/// <summary>The reliability diagram of a fit's calibration table: observed against predicted error per bin, with the diagonal.</summary>
public static class FitPlots
{
    public static ScottPlot.Plot Calibration(ReliabilityPlotData data, double brier)
    {
        var plot = new ScottPlot.Plot();
        var diagonal = plot.Add.Line(0, 0, data.AxisMax, data.AxisMax);
        diagonal.LinePattern = ScottPlot.LinePattern.Dashed;
        diagonal.Color = ScottPlot.Colors.Gray;
        diagonal.LegendText = "perfect calibration";
        if (data.Points.Count > 0)
        {
            var xs = data.Points.Select(p => p.MeanPredicted).ToArray();
            var ys = data.Points.Select(p => p.MeanObserved).ToArray();
            // Wilson intervals are asymmetric, so each is its own vertical segment.
            foreach (var p in data.Points)
            {
                var bar = plot.Add.Line(p.MeanPredicted, p.Low, p.MeanPredicted, p.High);
                bar.Color = ScottPlot.Colors.SteelBlue;
            }
            var points = plot.Add.Scatter(xs, ys);
            points.LineWidth = 0;
            points.MarkerSize = 8;
            points.Color = ScottPlot.Colors.SteelBlue;
            points.LegendText = "observed test error (Wilson 95 %)";
        }
        plot.Title(double.IsFinite(brier) ? $"Calibration of predicted error (Brier {brier:0.0000})" : "Calibration of predicted error");
        plot.XLabel("predicted error at the end of teaching");
        plot.YLabel("observed held-out test error");
        plot.Axes.SetLimits(0, data.AxisMax, 0, 1);
        plot.ShowLegend(ScottPlot.Alignment.UpperLeft);
        return plot;
    }
}
