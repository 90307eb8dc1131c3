namespace TeachServe.Server.Versions;

/// <summary>
/// One immutable model version of a project: the settings and items exactly as they were compiled
/// (so later uploads and edits cannot change a running session), the engine's serialized model, the compile
/// summary and a fingerprint. Any node loads the model from <see cref="Blob"/>; compilation is also
/// deterministic, so a row without a blob is rebuilt from its snapshot.
/// </summary>
public sealed class ModelVersionRecord
{
    public required string ProjectId { get; set; }
    public int Number { get; set; }
    public required string Status { get; set; }
    public required string SettingsJson { get; set; }
    /// <summary>The compiled items as JSON Lines, in upload-id order.</summary>
    public required string ItemsJson { get; set; }
    /// <summary>SHA-256 (hex) of the settings and items snapshot, so an identical compile returns this version; null on rows from before it was kept.</summary>
    public string? SnapshotHash { get; set; }
    /// <summary>The compiled model as written by <c>ModelVersionSerializer</c>.</summary>
    public byte[]? Blob { get; set; }
    public int TeachCount { get; set; }
    public int TestCount { get; set; }
    public int HypothesisCount { get; set; }
    public int TargetIndex { get; set; }
    public string? SummaryJson { get; set; }
    /// <summary>Family <c>text</c>: the model that embedded the item texts.</summary>
    public string? EmbeddingModel { get; set; }
    /// <summary>Family <c>text</c>: length of each item's embedding.</summary>
    public int? EmbeddingDimension { get; set; }
    /// <summary>Family <c>text</c>: the items' embeddings (float32, little-endian), one row per item in <see cref="ItemsJson"/> order.</summary>
    public byte[]? Embeddings { get; set; }
    public string? Error { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset? ReadyAt { get; set; }
}

public static class VersionStatuses
{
    public const string Compiling = "compiling";
    public const string Ready = "ready";
    public const string Failed = "failed";
    public static readonly IReadOnlyList<string> All = [Compiling, Ready, Failed];
}
