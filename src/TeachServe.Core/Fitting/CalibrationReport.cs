using TeachServe.Core.Statistics;

namespace TeachServe.Core.Fitting;

/// <summary>One session's prediction and what its test then showed.</summary>
/// <param name="PredictedError">Ê when teaching ended, before the test answers (a probability in [0, 1]).</param>
/// <param name="TestAnswered">Held-out test answers given after that prediction.</param>
/// <param name="TestErrors">How many of them were wrong.</param>
public readonly record struct CalibrationCase(double PredictedError, int TestAnswered, int TestErrors);

/// <summary>Binning of <see cref="Calibration.Compute(IReadOnlyList{CalibrationCase}, CalibrationOptions?)"/>.</summary>
public sealed record CalibrationOptions
{
    /// <summary>Equal-width bins of predicted error over [0, <see cref="MaxPredicted"/>].</summary>
    public int Bins { get; init; } = 10;

    /// <summary>Upper edge of the last bin; predictions above it fall in the last bin.</summary>
    public double MaxPredicted { get; init; } = 1.0;

    /// <summary>Coverage of each bin's Wilson interval.</summary>
    public double Confidence { get; init; } = 0.95;
}

/// <summary>
/// One bin of the reliability table. Means are weighted by test answers, so that in a perfectly calibrated bin
/// the expected observed error equals the mean predicted error; the Wilson interval is that of the pooled errors.
/// Empty bins have NaN means and interval.
/// </summary>
public sealed record CalibrationBin(
    double Lower,
    double Upper,
    int Sessions,
    int TestAnswered,
    int TestErrors,
    double MeanPredicted,
    double MeanObserved,
    Interval ObservedInterval);

/// <summary>How well predicted error matched observed held-out test error.</summary>
/// <param name="BrierScore">
/// Mean over test answers of (p − 1[wrong])², p the session's predicted error taken as the probability that a test
/// answer is wrong (Brier, "Verification of forecasts expressed in terms of probability", Mon. Weather Rev. 1950).
/// NaN without test answers.
/// </param>
public sealed record CalibrationReport(
    IReadOnlyList<CalibrationBin> Bins,
    double BrierScore,
    int Sessions,
    int TestAnswered,
    int TestErrors,
    double Confidence);

/// <summary>One point of a reliability plot: x = mean predicted error, y = observed error with its interval.</summary>
public readonly record struct ReliabilityPoint(double MeanPredicted, double MeanObserved, double Low, double High, int TestAnswered);

/// <summary>
/// What a reliability plot draws: one point per non-empty bin, the bin edges, and the diagonal y = x from 0 to
/// <see cref="AxisMax"/> that perfect calibration would follow.
/// </summary>
public sealed record ReliabilityPlotData(IReadOnlyList<ReliabilityPoint> Points, IReadOnlyList<double> BinEdges, double AxisMax);
