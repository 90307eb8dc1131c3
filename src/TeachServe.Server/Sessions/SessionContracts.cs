using TeachServe.Core.Projects;

namespace TeachServe.Server.Sessions;

public sealed record StartSessionRequest
{
    /// <summary>The platform's identifier of the annotator; opaque to TeachServe.</summary>
    public required string WorkerRef { get; init; }

    /// <summary>
    /// For a worker with an active session: true retires the session's token and hands out a new one (a takeover,
    /// recorded as a <c>session.resumed</c> event); false or absent returns the session without a token, and the
    /// annotator's current token keeps working.
    /// </summary>
    public bool Resume { get; init; }

    /// <summary>
    /// <c>onboarding</c> (the default) or <c>refresher</c>: a short session for a released annotator whose live checks
    /// show drift, on the model version they were released on, starting from what their live record says they hold
    /// now. It teaches at most 10 items, then runs one attempt of the project's test; passing makes them reliable
    /// again, failing pauses them. Refused (409) for a worker never released in the project.
    /// </summary>
    public string? Purpose { get; init; }
}

/// <summary>
/// The token and launch link are shown here only. Starting again for a worker with an active session returns that
/// session; they are null then unless the request asked to <see cref="StartSessionRequest.Resume"/>.
/// </summary>
public sealed record SessionStarted(string SessionId, string? Token, string? LaunchUrl, string Phase, int Step, int ModelVersion);

public sealed record NextItem(int Step, string Phase, ItemForAnnotator? Item);

/// <summary>What the annotator sees: an opaque per-session ref, the display content, and the label choices.</summary>
public sealed record ItemForAnnotator(string Ref, ItemContent Content, IReadOnlyList<string> Labels);

public sealed record AnswerRequest
{
    public required int Step { get; init; }
    public required string ItemRef { get; init; }
    public required string Label { get; init; }
}

/// <summary>
/// One shape for all answers; absent members are left out. Teaching: correct, label (the true one),
/// explanation, predictedError. Testing: recorded only. Ended: the phase only (the annotator holds the session
/// token, and test counts would tell which test answers were wrong; owners read the evidence elsewhere).
/// </summary>
public sealed record AnswerResult
{
    public bool? Correct { get; init; }
    public string? Label { get; init; }
    public string? Explanation { get; init; }
    public double? PredictedError { get; init; }
    public bool? Recorded { get; init; }
    /// <summary>The test did not pass and a retake returns the session to teaching.</summary>
    public bool? Retake { get; init; }
    public required string Phase { get; init; }
    /// <summary>The step to answer next.</summary>
    public required int Step { get; init; }
    public EvidenceView? Evidence { get; init; }
}

public sealed record IntervalView(double Low, double High);

/// <summary>One test attempt: all its answers, those the test counted (the rest came after its decision), its verdict.</summary>
public sealed record AttemptView(int Attempt, int Answered, int Errors, int CountedAnswered, int CountedErrors, bool? Passed);

/// <summary>
/// What a release (or failure) is based on (DESIGN 2.5 point 4), for the owner and the platform, never the
/// annotator. Test counts and the interval cover every attempt; <c>attempts</c> lists each.
/// </summary>
public sealed record EvidenceView(
    string Phase,
    int ItemsTaught,
    IReadOnlyList<string> TaughtItemIds,
    int TestAnswered,
    int TestErrors,
    double? TestError,
    IntervalView? TestErrorInterval,
    double PredictedError,
    double Confidence,
    int RetakesUsed,
    int ModelVersion,
    string Policy,
    IReadOnlyList<AttemptView>? Attempts = null);

public sealed record SessionView
{
    public required string SessionId { get; init; }
    public required string WorkerRef { get; init; }
    public required string Phase { get; init; }
    public required int Step { get; init; }
    public required int ItemsTaught { get; init; }
    public required int TestAnswered { get; init; }
    /// <summary>Hidden from the annotator while testing: its movement would hint at whether test answers were right.</summary>
    public double? PredictedError { get; init; }
    public required int ModelVersion { get; init; }
    public required string Policy { get; init; }
    public required DateTimeOffset CreatedAt { get; init; }
    public DateTimeOffset? EndedAt { get; init; }
    public EvidenceView? Evidence { get; init; }
    /// <summary><c>onboarding</c> or <c>refresher</c>.</summary>
    public string Purpose { get; init; } = SessionPurposes.Onboarding;
}

public sealed record SessionPage(IReadOnlyList<SessionView> Sessions, string? Next);
