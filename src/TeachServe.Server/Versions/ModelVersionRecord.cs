namespace TeachServe.Server.Versions;

/// <summary>
/// One immutable model version of a project: the settings and items exactly as they were compiled
/// (so later uploads and edits cannot change a running session), the compile summary, and a fingerprint
/// of the compiled model. Compilation is deterministic, so any node rebuilds the same model from this row.
/// </summary>
public sealed class ModelVersionRecord
{
    public required string ProjectId { get; set; }
    public int Number { get; set; }
    public required string Status { get; set; }
    public required string SettingsJson { get; set; }
    /// <summary>The compiled items as JSON Lines, in upload-id order.</summary>
    public required string ItemsJson { get; set; }
    public int TeachCount { get; set; }
    public int TestCount { get; set; }
    public int HypothesisCount { get; set; }
    public int TargetIndex { get; set; }
    public string? SummaryJson { get; set; }
    public string? Error { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset? ReadyAt { get; set; }
}

public static class VersionStatuses
{
    public const string Compiling = "compiling";
    public const string Ready = "ready";
    public const string Failed = "failed";
}
