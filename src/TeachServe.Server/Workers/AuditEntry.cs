namespace TeachServe.Server.Workers;

/// <summary>
/// A record of an administrative action on personal data. It names the worker only by a hash, so that the
/// record of an erasure does not itself keep the erased identifier.
/// </summary>
public sealed class AuditEntry
{
    public long Id { get; set; }
    public required string ProjectId { get; set; }
    public required string Action { get; set; }
    public required string SubjectHash { get; set; }
    public required string DetailsJson { get; set; }
    public DateTimeOffset At { get; set; }
}
