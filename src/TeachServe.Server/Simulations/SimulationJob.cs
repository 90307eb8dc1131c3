namespace TeachServe.Server.Simulations;

/// <summary>One simulation run submitted over the API: its request, state, progress and results.</summary>
public sealed class SimulationJob : Infrastructure.IProjectOwned
{
    public required string Id { get; set; }
    public required string ProjectId { get; set; }
    public int ModelVersion { get; set; }
    public required string RequestJson { get; set; }
    public required string Status { get; set; }
    /// <summary>Share of learner runs done, in [0, 1].</summary>
    public double Progress { get; set; }
    /// <summary>Why the job was canceled or failed.</summary>
    public string? Reason { get; set; }
    public string? ResultJson { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset? StartedAt { get; set; }
    public DateTimeOffset? FinishedAt { get; set; }
    /// <summary>The node whose queue holds the job (several nodes share one database).</summary>
    public string? NodeId { get; set; }
    /// <summary>When that node last confirmed it still holds the job; a job without news for long is failed.</summary>
    public DateTimeOffset? HeartbeatAt { get; set; }
}

public static class SimulationStatuses
{
    public const string Queued = "queued";
    public const string Running = "running";
    public const string Succeeded = "succeeded";
    public const string Failed = "failed";
    public const string Canceled = "canceled";
    public static readonly IReadOnlyList<string> All = [Queued, Running, Succeeded, Failed, Canceled];

    public static bool IsFinal(string status) => status is Succeeded or Failed or Canceled;
}
