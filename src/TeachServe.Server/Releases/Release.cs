namespace TeachServe.Server.Releases;

/// <summary>The record that an annotator passed the gate; <see cref="Id"/> orders the release feed.</summary>
public sealed class Release
{
    public long Id { get; set; }
    public required string ProjectId { get; set; }
    public required string SessionId { get; set; }
    public required string WorkerRef { get; set; }
    public int ModelVersion { get; set; }
    public DateTimeOffset ReleasedAt { get; set; }
    public required string EvidenceJson { get; set; }
}
