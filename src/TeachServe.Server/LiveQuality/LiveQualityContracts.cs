using System.ComponentModel;

namespace TeachServe.Server.LiveQuality;

/// <summary>One live-check outcome as the platform reports it.</summary>
public sealed record LiveCheckInput
{
    /// <summary>The platform's id of this outcome (1 to 100 printable characters); sending it again with the same body is a no-op.</summary>
    public required string OutcomeId { get; init; }
    /// <summary>The released annotator who answered.</summary>
    public required string WorkerRef { get; init; }
    /// <summary>An item of the project, whose label is the known answer; or the id of the <c>item</c> carried inline.</summary>
    public required string ItemId { get; init; }
    /// <summary>The label the annotator gave.</summary>
    public required string Label { get; init; }
    /// <summary>When the annotator answered; a worker's outcomes are applied in this order, then in order of arrival.</summary>
    public required DateTimeOffset AnsweredAt { get; init; }
    /// <summary>
    /// A known-answer item made up on the fly, stored under <c>itemId</c> in pool <c>live</c> with this batch (never
    /// taught, tested or compiled). Checked like an uploaded item; sending it again with the same content is a no-op,
    /// and an item stored earlier under this id with other content (or in another pool) is a 409.
    /// </summary>
    [Description("A known-answer item made up on the fly, stored under itemId in pool 'live' with the batch (never taught, tested or compiled). " +
        "Checked like an uploaded item; the same content again is a no-op; another item stored under this id is a 409.")]
    public LiveItemInput? Item { get; init; }
}

/// <summary>An item carried inline by an outcome: an uploaded item's fields without <c>id</c> (the outcome's <c>itemId</c>) and <c>pool</c> (<c>live</c>).</summary>
[Description("An item carried by an outcome: an uploaded item's fields without id (the outcome's itemId) and pool (live).")]
public sealed record LiveItemInput
{
    /// <summary>The known answer, one of the project's labels.</summary>
    [Description("The known answer, one of the project's labels.")]
    public required string Label { get; init; }
    /// <summary>Numeric features (families <c>linear</c> and <c>stumps</c> need the project's features on every item).</summary>
    [Description("Numeric features by name (families linear and stumps need the features the other items of the batch have).")]
    public IReadOnlyDictionary<string, double>? Features { get; init; }
    /// <summary>Binary attributes: the names of the cues present.</summary>
    [Description("Binary attributes: the names of the cues present.")]
    public IReadOnlyList<string>? Attributes { get; init; }
    /// <summary>Family <c>embedding</c>: the item's vector, as long as the project's other items' vectors.</summary>
    [Description("Family embedding: the item's vector of finite numbers.")]
    public float[]? Embedding { get; init; }
    /// <summary>What the annotator saw: at least one of text, imageUrl or svg.</summary>
    [Description("What the annotator saw: at least one of text, imageUrl or svg (family text needs text).")]
    public Core.Projects.ItemContent? Content { get; init; }
    [Description("Why the known answer is right (kept with the item; live items are never shown with feedback).")]
    public string? Explanation { get; init; }

    /// <summary>The item as an upload would hold it.</summary>
    public Core.Projects.ItemDefinition Definition(string itemId) => new()
    {
        Id = itemId, Pool = Core.Projects.Pools.Live, Label = Label, Features = Features, Attributes = Attributes,
        Embedding = Embedding, Content = Content, Explanation = Explanation,
    };
}

public sealed record LiveChecksRequest
{
    /// <summary>1 to 1,000 outcomes, stored all or none.</summary>
    public required IReadOnlyList<LiveCheckInput> Outcomes { get; init; }
}

/// <summary>
/// What a batch did: outcomes stored now, outcomes already stored earlier (retries), the status of each annotator it
/// touched, and the inline items it stored in pool <c>live</c> (items already stored with the same content are not counted).
/// </summary>
public sealed record LiveChecksStored(
    int Stored, int Duplicates, IReadOnlyList<LiveAnnotatorStatus> Annotators,
    [property: Description("Items carried inline and stored now in pool 'live' (items already stored with the same content are not counted).")] int ItemsStored = 0);

public sealed record LiveAnnotatorStatus(string WorkerRef, string Status, int Checks);

/// <summary>One line of a refused batch: the outcome's index in the batch, the field, and what is wrong.</summary>
public sealed record LiveCheckError(int Index, string Field, string Message);

/// <summary>
/// An annotator's live quality: status, live checks and errors, the live error with its Wilson 95 % interval, the last
/// alarm, and both views side by side on the answer-error scale against the same target (docs/live-quality.md, "Two
/// views"): the model view's predicted answer error and the count view's interval, each read as above or within target.
/// </summary>
public sealed record LiveAnnotatorView(
    string WorkerRef, string SessionId, int ModelVersion, string Status, int Checks, int Errors, double? LiveError,
    double? LiveErrorLow, double? LiveErrorHigh, int Alarms, DateTimeOffset? LastAlarmAt, string? LastAlarm,
    DateTimeOffset StartedAt, DateTimeOffset LastAnsweredAt,
    [property: Description("The answer error both views are read against: the gate's target error with lapses counted, as the count chart's in-control error.")]
    double TargetAnswerError,
    [property: Description("The model view: the predicted share of live checks answered wrong, from the annotator's belief continued in live mode with forgetting; null before the first check after release or a refresher.")]
    double? ModelPredictedError,
    [property: Description("The model view's probability that the annotator's rule errs above the gate's target error; null when it has no value yet.")]
    double? ModelRisk,
    [property: Description("The model view read against the target: 'above-target' when its predicted answer error is above the target and its risk is at least 1/2, 'within-target' otherwise, null when it has no value yet.")]
    string? ModelView,
    [property: Description("The count view read against the target: 'above-target' when the live error's interval lies above it, 'within-target' when it lies at or below it, 'undecided' when it straddles it or there are no checks.")]
    string CountView,
    [property: Description("False when one view says above target and the other within target: the two views disagree, and the annotator deserves a look.")]
    bool ViewsAgree);

/// <summary>How a view reads against the target (<see cref="LiveAnnotatorView"/>).</summary>
public static class LiveViewReadings
{
    public const string Above = "above-target";
    public const string Within = "within-target";
    public const string Undecided = "undecided";

    public static string? Model(double? error, double? risk, double target) =>
        error is not { } e || risk is not { } r ? null : LiveModel.Signal(e, r, target) is null ? Within : Above;

    public static string Count(double? low, double? high, double target) =>
        low > target ? Above : high <= target ? Within : Undecided;

    /// <summary>The views disagree only when one says above and the other within; undecided or missing agrees with either.</summary>
    public static bool Agree(string? model, string count) =>
        !((model == Above && count == Within) || (model == Within && count == Above));
}

/// <summary>The project's monitored annotators, by worker ref; <c>next</c> is the cursor of the following page (null on the last).</summary>
public sealed record LiveQualityView(
    IReadOnlyList<LiveAnnotatorView> Annotators,
    [property: Description("The cursor of the next page (pass it as 'cursor'); null on the last page.")] string? Next = null);

public sealed record LiveOutcomeView(string OutcomeId, string ItemId, string Label, string KnownLabel, bool Wrong, DateTimeOffset AnsweredAt, DateTimeOffset ReceivedAt)
{
    /// <summary>The model view's predicted answer error after this outcome.</summary>
    [Description("The model view's predicted answer error after this outcome (the annotator's belief continued in live mode).")]
    public double? ModelPredictedError { get; init; }
    /// <summary>The monitors that alarmed at this outcome (<c>count-cusum</c>, <c>candidate-rule</c>, both joined by '+'), or null.</summary>
    [Description("The monitors that alarmed at this outcome: 'count-cusum', 'candidate-rule', or both joined by '+'; null for none.")]
    public string? Alarm { get; init; }
}

/// <summary>A likely confusion of the model view: the expected share of items of <c>knownLabel</c> the annotator labels <c>givenLabel</c>.</summary>
public sealed record LikelyConfusionView(string KnownLabel, string GivenLabel, double Rate);

/// <summary>A candidate rule whose own drift chart watches the annotator (chosen at release), in words.</summary>
public sealed record WatchedRuleView(int Rule, string Description);

/// <summary>One annotator's live quality and their outcomes in the order the monitor applied them (the newest 1,000).</summary>
public sealed record LiveAnnotatorHistory(LiveAnnotatorView Annotator, IReadOnlyList<LiveOutcomeView> Outcomes)
{
    /// <summary>The model view's three likeliest confusions now, by label name, largest first.</summary>
    [Description("The model view's three likeliest confusions now, largest first: the expected share of items of knownLabel that the annotator labels givenLabel.")]
    public IReadOnlyList<LikelyConfusionView> LikelyConfusions { get; init; } = [];
    /// <summary>The candidate rules watched by their own drift charts.</summary>
    [Description("The candidate shortcut rules watched by their own drift charts, chosen at release from the annotator's belief and the prior.")]
    public IReadOnlyList<WatchedRuleView> WatchedRules { get; init; } = [];
}

/// <summary>The wire names of <see cref="Core.LiveQuality.LiveStatus"/>.</summary>
public static class LiveStatusNames
{
    public const string Reliable = "reliable";
    public const string Watch = "watch";
    public const string RefresherDue = "refresher-due";
    public const string Paused = "paused";

    public static readonly IReadOnlyList<string> All = [Reliable, Watch, RefresherDue, Paused];

    public static string Of(Core.LiveQuality.LiveStatus status) => status switch
    {
        Core.LiveQuality.LiveStatus.Reliable => Reliable,
        Core.LiveQuality.LiveStatus.Watch => Watch,
        Core.LiveQuality.LiveStatus.RefresherDue => RefresherDue,
        _ => Paused,
    };
}
