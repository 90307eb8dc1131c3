namespace TeachServe.Server.Events;

/// <summary>One entry of a project's append-only event log.</summary>
public sealed class SessionEvent
{
    public long Id { get; set; }
    public required string ProjectId { get; set; }
    public string? SessionId { get; set; }
    public string? WorkerRef { get; set; }
    public required string Type { get; set; }
    public int? Step { get; set; }
    public DateTimeOffset At { get; set; }
    public required string DataJson { get; set; }
}

public static class EventTypes
{
    public const string SessionStarted = "session.started";
    /// <summary>A start with <c>resume: true</c> retired the active session's token and issued a new one.</summary>
    public const string SessionResumed = "session.resumed";
    public const string Answer = "answer";
    public const string SessionReleased = "session.released";
    public const string SessionFailed = "session.failed";
    /// <summary>A refresher session passed its check: the annotator is reliable again.</summary>
    public const string RefresherPassed = "refresher.passed";
    /// <summary>A refresher session failed its check: the annotator is paused.</summary>
    public const string RefresherFailed = "refresher.failed";
    public const string WorkerErased = "worker.erased";
    /// <summary>A released annotator's live-quality status changed (reliable, watch, refresher-due, paused).</summary>
    public const string LiveStatusChanged = "live.status";
}
