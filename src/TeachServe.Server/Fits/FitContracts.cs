using TeachServe.Core.Fitting;

namespace TeachServe.Server.Fits;

/// <summary>The body of <c>POST /projects/{id}/fits</c>.</summary>
public sealed record CreateFitRequest
{
    /// <summary>The model version whose finished sessions are fitted; null = the newest ready version.</summary>
    public int? ModelVersion { get; init; }
    /// <summary>Confidence of the profile-likelihood intervals, in [0.5, 0.999].</summary>
    public double Confidence { get; init; } = 0.95;
    /// <summary>Bins of the reliability table, 2 to 50.</summary>
    public int CalibrationBins { get; init; } = 10;
}

public sealed record FitView(
    string FitId,
    string ProjectId,
    int ModelVersion,
    FitResult Fit,
    CalibrationReport Calibration,
    DateTimeOffset CreatedAt,
    DateTimeOffset? AppliedAt);
