namespace TeachServe.Server.Experiments;

/// <summary>An A/B test of teaching configurations in one project; its definition is stored as JSON.</summary>
public sealed class Experiment : Infrastructure.IProjectOwned
{
    public required string Id { get; set; }
    public required string ProjectId { get; set; }
    public required string Name { get; set; }
    /// <summary>The <see cref="Core.Experiments.ExperimentDefinition"/>, salt included.</summary>
    public required string DefinitionJson { get; set; }
    public required string Status { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset? StartedAt { get; set; }
    public DateTimeOffset? StoppedAt { get; set; }
}

public static class ExperimentStatuses
{
    public const string Draft = "draft";
    public const string Running = "running";
    public const string Stopped = "stopped";
    public static readonly IReadOnlyList<string> All = [Draft, Running, Stopped];
}
