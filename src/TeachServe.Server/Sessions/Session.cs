namespace TeachServe.Server.Sessions;

/// <summary>
/// The current state of one annotator's onboarding run. The event log is the source of truth; this row is
/// its summary, and <see cref="Step"/> (answers so far) is the optimistic-concurrency token of every write.
/// </summary>
public sealed class Session
{
    public required string Id { get; set; }
    public required string ProjectId { get; set; }
    public required string WorkerRef { get; set; }
    /// <summary>True while teaching or testing; at most one active session per worker and project.</summary>
    public bool IsActive { get; set; }
    public required string Phase { get; set; }
    public int Step { get; set; }
    public int ModelVersion { get; set; }
    public required string Policy { get; set; }
    public long Seed { get; set; }
    public required byte[] TokenHash { get; set; }
    /// <summary>Per-session key for the opaque item refs handed to the annotator.</summary>
    public required byte[] RefKey { get; set; }
    public double PredictedError { get; set; }
    public int TaughtCount { get; set; }
    public int TestAnswered { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset LastSeenAt { get; set; }
    public DateTimeOffset? EndedAt { get; set; }
    public string? EvidenceJson { get; set; }
    /// <summary>The experiment the session was assigned in, if one was running when it started.</summary>
    public string? ExperimentId { get; set; }
    public int? ArmIndex { get; set; }
    /// <summary>The arm's definition as it was at the start, so a replay applies exactly the same options.</summary>
    public string? ArmJson { get; set; }
    /// <summary>What the session is for (<see cref="SessionPurposes"/>): onboarding, or a refresher of a released annotator.</summary>
    public string Purpose { get; set; } = SessionPurposes.Onboarding;
}

public static class SessionPurposes
{
    public const string Onboarding = "onboarding";
    /// <summary>A short session for a released annotator, started from their live belief (<see cref="LiveQuality.RefresherStart"/>).</summary>
    public const string Refresher = "refresher";
    public static readonly IReadOnlyList<string> All = [Onboarding, Refresher];
}

public static class Phases
{
    public const string Teaching = "teaching";
    public const string Testing = "testing";
    public const string Released = "released";
    public const string Failed = "failed";
    public static readonly IReadOnlyList<string> All = [Teaching, Testing, Released, Failed];
}
