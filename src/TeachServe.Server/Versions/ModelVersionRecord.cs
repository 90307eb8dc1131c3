namespace TeachServe.Server.Versions;

/// <summary>
/// One compiled, immutable model version of a project. <see cref="Blob"/> is the engine's serialized model;
/// <see cref="DisplayJson"/> keeps what annotators see of each item at compile time, so later uploads
/// cannot change a running session.
/// </summary>
public sealed class ModelVersionRecord
{
    public required string ProjectId { get; set; }
    public int Number { get; set; }
    public required string Status { get; set; }
    public required string SettingsJson { get; set; }
    public int TeachCount { get; set; }
    public int TestCount { get; set; }
    public byte[]? Blob { get; set; }
    public string? DisplayJson { get; set; }
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
