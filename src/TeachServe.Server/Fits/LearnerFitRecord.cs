namespace TeachServe.Server.Fits;

/// <summary>A stored fit of the learner model to the finished sessions of one model version.</summary>
public sealed class LearnerFitRecord : Infrastructure.IProjectOwned
{
    public required string Id { get; set; }
    public required string ProjectId { get; set; }
    public int ModelVersion { get; set; }
    /// <summary>The <see cref="FitView"/> as JSON.</summary>
    public required string ResultJson { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset? AppliedAt { get; set; }
}
