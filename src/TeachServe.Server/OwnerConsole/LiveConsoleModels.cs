using TeachServe.Server.LiveQuality;

namespace TeachServe.Server.OwnerConsole;

/// <summary>The live-quality page: annotators counted by status, and one page of the table (optionally one status only).</summary>
public sealed record LiveQualityModel(string ProjectId, string ProjectName, string FormToken, DateTimeOffset AsOf, LiveQualityTable Table,
    IReadOnlyList<LiveRefresherRow> Refreshers);

/// <summary>One refresher session of the project (newest first on the page): who, when, how far it got and how its check ended.</summary>
/// <param name="Phase">The session's phase: teaching or testing while it runs; released (check passed) or failed once ended.</param>
/// <param name="LiveChecks">Live checks that moved the belief it started from.</param>
/// <param name="AppliedAt">When the annotator's live monitor took in how it ended; null until then.</param>
public sealed record LiveRefresherRow(
    string SessionId, string WorkerRef, DateTimeOffset StartedAt, DateTimeOffset? EndedAt, bool IsActive, string Phase,
    int TaughtCount, int MaxItems, int TestAnswered, int LiveChecks, DateTimeOffset? AppliedAt);

/// <summary>
/// One page of the monitored annotators, the most urgent status first, then by worker ref.
/// </summary>
/// <param name="ByStatus">Annotators per status, every status of <see cref="LiveConsoleReads.Statuses"/> present (0 when none).</param>
/// <param name="Status">The status shown, or null for all.</param>
/// <param name="Matching">Annotators with that status (all when <paramref name="Status"/> is null).</param>
public sealed record LiveQualityTable(
    IReadOnlyDictionary<string, int> ByStatus, string? Status, int Page, int Matching, IReadOnlyList<LiveAnnotatorView> Annotators)
{
    public int Total => ByStatus.Values.Sum();
}

/// <summary>
/// One annotator's live view. A record with named members so that a later list (their refresher sessions, say) is one
/// more member and one more section of the page.
/// </summary>
public sealed record LiveAnnotatorModel(string ProjectName, string FormToken, DateTimeOffset AsOf, LiveAnnotatorDetail Detail);

/// <param name="TargetAnswerError">p0: the gate's target rule error mapped to an answer error, as the monitor uses it.</param>
/// <param name="DriftAnswerError">p1: the drift answer error the monitor's CUSUM is tuned to detect.</param>
/// <param name="Points">Every live check since the monitor started, in the order the monitor applied them.</param>
/// <param name="Changes">The annotator's status changes (the project's <c>live.status</c> events), oldest first.</param>
/// <param name="Outcomes">One page of the outcomes, newest first.</param>
public sealed record LiveAnnotatorDetail(
    LiveAnnotatorView Annotator,
    double TargetAnswerError,
    double DriftAnswerError,
    IReadOnlyList<LivePoint> Points,
    IReadOnlyList<LiveStatusChange> Changes,
    IReadOnlyList<LiveOutcomeView> Outcomes,
    int OutcomePage)
{
    /// <summary>The model view's likeliest confusions now, by label name.</summary>
    public IReadOnlyList<LikelyConfusionView> LikelyConfusions { get; init; } = [];
    /// <summary>The candidate rules watched by their own charts.</summary>
    public IReadOnlyList<WatchedRuleView> WatchedRules { get; init; } = [];
    /// <summary>The forgetting rate the model view moves with.</summary>
    public double ForgettingPerCheck { get; init; }
}

/// <summary>
/// The live error after one check: cumulative since the monitor started, and over the last
/// <see cref="LiveConsoleReads.Window"/> checks with its Wilson 95 % interval; whether a monitor alarmed at it; and the
/// model view's predicted answer error after it.
/// </summary>
public sealed record LivePoint(int Check, string OutcomeId, DateTimeOffset AnsweredAt, bool Wrong, double Cumulative, double Window, double WindowLow, double WindowHigh, bool Alarm,
    double ModelError);

/// <summary>One <c>live.status</c> event: from, to, and what caused it (an outcome, with or without an alarm, or a refresher's end).</summary>
public sealed record LiveStatusChange(DateTimeOffset At, string From, string To, string? OutcomeId, DateTimeOffset? AnsweredAt, int? Checks, int? Errors, bool Alarm, string? RefresherSessionId)
{
    /// <summary>The views that said "worse than target" (<see cref="LiveQuality.LiveCauses"/>).</summary>
    public IReadOnlyList<string> Causes { get; init; } = [];
    public string? CandidateRule { get; init; }
}
