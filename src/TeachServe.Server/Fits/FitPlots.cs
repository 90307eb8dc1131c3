using TeachServe.Core.Fitting;
using TeachServe.Plots;

namespace TeachServe.Server.Fits;

/// <summary>The reliability diagram of a fit's calibration table: observed against predicted error per bin, with the diagonal.</summary>
public static class FitPlots
{
    public static ScottPlot.Plot Calibration(ReliabilityPlotData data, double brier)
    {
        ArgumentNullException.ThrowIfNull(data);
        var points = data.Points;
        return CalibrationFigure.Draw(
            double.IsFinite(brier) ? $"Calibration of predicted error (Brier {brier:0.0000})" : "Calibration of predicted error",
            "predicted error at the end of teaching", "observed held-out test error",
            new CalibrationSeries("observed test error per bin (Wilson 95 %)",
                points.Select(p => p.MeanPredicted).ToArray(), points.Select(p => p.MeanObserved).ToArray(),
                points.Select(p => p.Low).ToArray(), points.Select(p => p.High).ToArray()),
            targetError: null);
    }
}
