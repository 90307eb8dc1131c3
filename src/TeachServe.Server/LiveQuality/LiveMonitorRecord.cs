namespace TeachServe.Server.LiveQuality;

/// <summary>
/// A released annotator's drift-monitor state (<see cref="Core.LiveQuality.LiveMonitorState"/> bytes) and its summary,
/// started at their first live check. The live-check rows are the source of truth: the state equals replaying them in
/// order (answered time, then arrival) from the start state.
/// </summary>
public sealed class LiveMonitorRecord
{
    public required string ProjectId { get; set; }
    public required string WorkerRef { get; set; }
    /// <summary>The session whose release the monitor continues.</summary>
    public required string SessionId { get; set; }
    /// <summary>The model version the annotator was released on; the monitor's settings come from it.</summary>
    public int ModelVersion { get; set; }
    public required byte[] State { get; set; }
    public required string Status { get; set; }
    public int Checks { get; set; }
    public int Errors { get; set; }
    public int Alarms { get; set; }
    /// <summary>The answered time of the last outcome applied; an earlier outcome arriving later makes the state be rebuilt.</summary>
    public DateTimeOffset LastAnsweredAt { get; set; }
    /// <summary>The last outcome applied (its row id), the tie-break of <see cref="LastAnsweredAt"/>.</summary>
    public long LastCheckId { get; set; }
    public DateTimeOffset? LastAlarmAt { get; set; }
    public string? LastAlarm { get; set; }
    public DateTimeOffset StartedAt { get; set; }
    public DateTimeOffset UpdatedAt { get; set; }
    /// <summary>
    /// The model view: the live belief after the last outcome applied (one little-endian double per hypothesis of the
    /// version), or null when it restarts from the newest ended session (at the first check, after a refresher).
    /// Stored because replaying the whole record on every batch would grow with it; a rebuild replays it from the log.
    /// </summary>
    public byte[]? Belief { get; set; }
    /// <summary>The model view's predicted answer error after the last outcome applied; null until it has one.</summary>
    public double? ModelError { get; set; }
    /// <summary>The model view's probability that the annotator's rule errs above the gate's target, after the last outcome applied.</summary>
    public double? ModelRisk { get; set; }
    /// <summary>The forgetting rate the belief was moved with; when the project's setting differs, the next batch rebuilds.</summary>
    public double ForgettingPerCheck { get; set; }
    /// <summary>The target both views are read against: the count chart's in-control answer error.</summary>
    public double TargetAnswerError { get; set; }
    /// <summary>Optimistic-concurrency token: batches of one worker on two nodes cannot both apply to the same state.</summary>
    public int Revision { get; set; }
}
