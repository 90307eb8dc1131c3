using ScottPlot;
using TeachServe.Plots;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// The onboarding pictures with each version's target (a version keeps the gate it was compiled with), and the
/// per-annotator picture of one session's predicted error. One target is drawn as the shared figures draw it; several
/// (all versions, different targets) as one dashed line each, labelled with its versions.
/// </summary>
public static class ConsoleVersionPlots
{
    /// <summary>The style of an answer the annotator got wrong on the per-annotator picture: black (no policy's colour), a cross.</summary>
    public static readonly SeriesStyle Mistake = new(OkabeIto.Black, MarkerShape.Eks);

    public static Plot Calibration(IReadOnlyList<CalibrationPoint> points, IReadOnlyList<TargetLine> targets)
    {
        if (targets.Count == 1) return ConsolePlots.Calibration(points, targets[0].TargetError);
        var plot = ConsolePlots.Calibration(points, double.NaN);
        AddTargets(plot, targets, square: true);
        return plot;
    }

    public static Plot LearningCurve(IReadOnlyList<CurvePoint> curve, double startingError, IReadOnlyList<TargetLine> targets)
    {
        if (targets.Count == 1) return ConsolePlots.LearningCurve(curve, startingError, targets[0].TargetError);
        var plot = ConsolePlots.LearningCurve(curve, startingError, double.NaN);
        AddTargets(plot, targets, square: false);
        return plot;
    }

    /// <summary>
    /// One session's predicted error after each teaching answer (from the answer events), starting from the prior's
    /// error, in the session's policy colour; the teaching answers that were wrong are marked with a large cross; the
    /// version's target as a dashed line. Test answers have no point: their figure is not recorded with them.
    /// </summary>
    public static Plot SessionPredictedError(SessionDetail detail)
    {
        var taught = detail.Taught;
        var xs = new List<double>();
        var ys = new List<double>();
        if (detail.StartingPredictedError is { } start)
        {
            xs.Add(0);
            ys.Add(start);
        }
        for (var i = 0; i < taught.Count; i++)
        {
            if (taught[i].PredictedError is not { } pe) continue;
            xs.Add(i + 1);
            ys.Add(pe);
        }
        var style = SeriesStyles.ForPolicy(detail.View.Policy);
        // No legend: one line, named by the title, and the page's caption says what the crosses mean; a legend beside
        // the data would take a third of a phone-sized picture.
        var plot = LearningCurves.Draw("Predicted error of this annotator", "predicted error",
            [new CurveSeries("", style, xs, ys)], detail.TargetError);
        var wrong = taught.Select((a, i) => (a, x: i + 1.0)).Where(t => !t.a.Correct && t.a.PredictedError is not null).ToList();
        Marks.Points(plot, Mistake, wrong.Select(t => t.x).ToArray(), wrong.Select(t => t.a.PredictedError!.Value).ToArray(), Marks.MarkerSize + 4);
        return plot;
    }

    /// <summary>
    /// A labelled dashed line per target, the rate axis stretched to hold the highest; neighbouring labels alternate
    /// between the right end and the middle of their lines so that close targets do not write over each other.
    /// </summary>
    private static void AddTargets(Plot plot, IReadOnlyList<TargetLine> targets, bool square)
    {
        var limits = plot.Axes.GetLimits();
        var high = AxisRanges.Rate(targets.Select(t => t.TargetError).Append(limits.Top)).High;
        if (high > limits.Top)
        {
            var shown = new AxisRange(0, high).WithRoomBelow();
            if (square) plot.Axes.SetLimits(shown.Low, shown.High, shown.Low, shown.High);
            else plot.Axes.SetLimitsY(shown.Low, shown.High);
            limits = plot.Axes.GetLimits();
        }
        var x0 = Math.Max(0, limits.Left);
        for (var i = 0; i < targets.Count; i++)
        {
            var t = targets[i].TargetError;
            Marks.Reference(plot, x0, t, limits.Right, t, targets[i].Label(withVersions: true), labelAt: i % 2 == 0 ? 1 : 0.3);
        }
    }
}
