namespace TeachServe.Server.LiveQuality;

/// <summary>One live-check outcome as the platform reports it.</summary>
public sealed record LiveCheckInput
{
    /// <summary>The platform's id of this outcome (1 to 100 printable characters); sending it again with the same body is a no-op.</summary>
    public required string OutcomeId { get; init; }
    /// <summary>The released annotator who answered.</summary>
    public required string WorkerRef { get; init; }
    /// <summary>An item of the project, whose label is the known answer.</summary>
    public required string ItemId { get; init; }
    /// <summary>The label the annotator gave.</summary>
    public required string Label { get; init; }
    /// <summary>When the annotator answered; a worker's outcomes are applied in this order, then in order of arrival.</summary>
    public required DateTimeOffset AnsweredAt { get; init; }
}

public sealed record LiveChecksRequest
{
    /// <summary>1 to 1,000 outcomes, stored all or none.</summary>
    public required IReadOnlyList<LiveCheckInput> Outcomes { get; init; }
}

/// <summary>What a batch did: outcomes stored now, outcomes already stored earlier (retries), and the status of each annotator it touched.</summary>
public sealed record LiveChecksStored(int Stored, int Duplicates, IReadOnlyList<LiveAnnotatorStatus> Annotators);

public sealed record LiveAnnotatorStatus(string WorkerRef, string Status, int Checks);

/// <summary>One line of a refused batch: the outcome's index in the batch, the field, and what is wrong.</summary>
public sealed record LiveCheckError(int Index, string Field, string Message);

/// <summary>An annotator's live quality: status, live checks and errors, the live error with its Wilson 95 % interval, the last alarm.</summary>
public sealed record LiveAnnotatorView(
    string WorkerRef, string SessionId, int ModelVersion, string Status, int Checks, int Errors, double? LiveError,
    double? LiveErrorLow, double? LiveErrorHigh, int Alarms, DateTimeOffset? LastAlarmAt, string? LastAlarm,
    DateTimeOffset StartedAt, DateTimeOffset LastAnsweredAt);

/// <summary>The project's monitored annotators and the monitor's design (answer errors: target p0, drift p1).</summary>
public sealed record LiveQualityView(IReadOnlyList<LiveAnnotatorView> Annotators);

public sealed record LiveOutcomeView(string OutcomeId, string ItemId, string Label, string KnownLabel, bool Wrong, DateTimeOffset AnsweredAt, DateTimeOffset ReceivedAt);

/// <summary>One annotator's live quality and their outcomes in the order the monitor applied them (the newest 1,000).</summary>
public sealed record LiveAnnotatorHistory(LiveAnnotatorView Annotator, IReadOnlyList<LiveOutcomeView> Outcomes);

/// <summary>The wire names of <see cref="Core.LiveQuality.LiveStatus"/>.</summary>
public static class LiveStatusNames
{
    public const string Reliable = "reliable";
    public const string Watch = "watch";
    public const string RefresherDue = "refresher-due";
    public const string Paused = "paused";

    public static string Of(Core.LiveQuality.LiveStatus status) => status switch
    {
        Core.LiveQuality.LiveStatus.Reliable => Reliable,
        Core.LiveQuality.LiveStatus.Watch => Watch,
        Core.LiveQuality.LiveStatus.RefresherDue => RefresherDue,
        _ => Paused,
    };
}
