using System.Text.Json.Serialization;
using TeachServe.Core.Hypotheses;

namespace TeachServe.Core.Projects;

/// <summary>The contents of <c>project.json</c>: everything about a project except its items.</summary>
public sealed record ProjectSettings
{
    public required string Name { get; init; }
    public required IReadOnlyList<string> Labels { get; init; }
    public required FamilySettings Family { get; init; }
    public LearnerSettings Learner { get; init; } = new();
    public GateSettings Gate { get; init; } = new();
    public string Policy { get; init; } = PolicyNames.Adaptive;
    /// <summary>Weight of the stochastic-greedy gain added to the adaptive gain (DESIGN 2.4); 2 was chosen by simulation on the seed projects (docs/research.md).</summary>
    public double BlendWeight { get; init; } = 2.0;
    /// <summary>What the annotator page says when a session ends; absent means the page's own wording.</summary>
    public CompletionSettings? Completion { get; init; }
    /// <summary>The owner's instructions and per-label guidance, shown to annotators before teaching and at any time after.</summary>
    public GuidanceSettings? Guidance { get; init; }
    /// <summary>What onboarding costs the platform, for comparing gates and policies by cost per qualified release.</summary>
    public CostSettings Cost { get; init; } = new();
    /// <summary>How released annotators are watched (docs/live-quality.md).</summary>
    public LiveSettings Live { get; init; } = new();
}

/// <summary>
/// The model view of released annotators: how fast their rule drifts back to the prior between live checks, and how
/// many candidate shortcut rules get their own drift chart. Read when live checks are applied, so a change reaches every
/// annotator at their next batch (their view is then rebuilt from the log with the new rate).
/// </summary>
public sealed record LiveSettings
{
    /// <summary>Largest per-check forgetting rate accepted (a fitted rate is searched on [0, 0.5]).</summary>
    public const double MaxForgettingPerCheck = 0.5;

    /// <summary>Largest number of candidate-rule charts per annotator.</summary>
    public const int MaxCandidateRules = 10;

    /// <summary>
    /// Probability per live check that the annotator falls back to a rule drawn from the prior, in [0, 0.5]. The default
    /// 0.005 (a half-life of about 140 checks) is a guess to be replaced by the project's own fit
    /// (<c>POST .../live-quality/forgetting-fit</c>): small enough that a stable annotator's correct answers hold the
    /// belief near the taught rule.
    /// </summary>
    public double ForgettingPerCheck { get; init; } = 0.005;

    /// <summary>
    /// Candidate shortcut rules watched per annotator, chosen at release (0 turns the charts off). Three: the design notes
    /// measured 0.62–0.67 of the window rule's delay with 10 candidates and 0.72–0.80 with 50, so fewer, better-chosen
    /// candidates are faster, and the annotator's own likely confusions rarely number more than a few.
    /// </summary>
    public int CandidateRules { get; init; } = 3;
}

/// <summary>
/// Costs in the owner's own unit (any currency): pay for annotator time and items, and the price of the gate's two
/// mistakes. Reports divide the total by the number of *qualified* releases (released and within target, known in
/// simulation), so a cheap gate that releases unqualified annotators does not look cheap.
/// </summary>
public sealed record CostSettings
{
    /// <summary>Paid per teaching item answered.</summary>
    public double PerTeachingItem { get; init; } = 0.05;
    /// <summary>Paid per test item answered (the tail included).</summary>
    public double PerTestItem { get; init; } = 0.05;
    /// <summary>Paid per minute of onboarding, with <see cref="SecondsPerItem"/> as the assumed time per item.</summary>
    public double PerMinute { get; init; }
    /// <summary>Assumed seconds an annotator spends per item, for <see cref="PerMinute"/> (measured times come from the sessions' events).</summary>
    public double SecondsPerItem { get; init; } = 20;
    /// <summary>The cost of releasing an annotator whose rule error exceeds the target (rework, bad labels).</summary>
    public double FalseRelease { get; init; } = 20;
    /// <summary>The cost of not releasing an annotator who was within target (recruiting another).</summary>
    public double FailedQualified { get; init; } = 2;
}

/// <summary>The end of onboarding as the annotator sees it: what happens next after a release or a failed test.</summary>
public sealed record CompletionSettings
{
    /// <summary>Shown after a release, e.g. "Your first batch of live items will appear in your queue within a day."</summary>
    public string? ReleasedMessage { get; init; }
    /// <summary>Shown when the test did not pass and no retake is left.</summary>
    public string? FailedMessage { get; init; }
    /// <summary>Optional link shown at the end (absolute http or https URL), e.g. back to the platform.</summary>
    public string? ContinueUrl { get; init; }
    /// <summary>Text of that link.</summary>
    public string? ContinueLabel { get; init; }
}

/// <summary>
/// What the owner tells annotators about the task, in Markdown (CommonMark; raw HTML is shown as text, images as
/// their description, and links only to http, https and mailto addresses). Not part of a model version: an edit
/// reaches running sessions at once, like the completion wording.
/// </summary>
public sealed record GuidanceSettings
{
    /// <summary>Longest instructions text, in characters.</summary>
    public const int MaxInstructions = 20_000;

    /// <summary>Longest guidance of one label, in characters.</summary>
    public const int MaxLabelGuidance = 4_000;

    /// <summary>The introduction and labelling guidelines, shown before the first teaching item.</summary>
    public string? Instructions { get; init; }

    /// <summary>Per label (by its name): when to choose it, shown with the instructions.</summary>
    public IReadOnlyDictionary<string, string>? Labels { get; init; }

    /// <summary>Whether there is anything to show.</summary>
    [JsonIgnore]
    public bool IsEmpty => string.IsNullOrWhiteSpace(Instructions) && (Labels is null || Labels.Values.All(string.IsNullOrWhiteSpace));
}

/// <summary>How the hypotheses of a project are generated (DESIGN 2.6).</summary>
public sealed record FamilySettings
{
    /// <summary><c>linear</c>, <c>cues</c>, <c>stumps</c>, <c>table</c>, <c>text</c> (item texts embedded by the server) or <c>embedding</c> (vectors sent with the items).</summary>
    public required string Kind { get; init; }
    public int Seed { get; init; } = 1;
    /// <summary>linear: number of random directions.</summary>
    public int RandomDirections { get; init; } = 300;
    /// <summary>linear: number of perturbed copies of the fitted target per scale.</summary>
    public int PerturbedCopies { get; init; } = 40;
    /// <summary>cues: largest number of non-zero weights in a rule.</summary>
    public int MaxCues { get; init; } = 3;
    /// <summary>cues: how many of the most informative attributes rules may use.</summary>
    public int CandidateCues { get; init; } = 8;
    /// <summary>Prior weight multiplier per unit of rule complexity; 1 = uniform prior.</summary>
    public double SimplicityBias { get; init; } = 1.0;
    /// <summary>text and embedding: principal components the item vectors are reduced to before the linear rules are built.</summary>
    public int Dimensions { get; init; } = EmbeddingFeatures.DefaultDimensions;
    /// <summary>table: predictions, one row per hypothesis, one label name per item id.</summary>
    public IReadOnlyList<TableHypothesis>? Table { get; init; }
}

/// <summary>One uploaded hypothesis of a <c>table</c> family.</summary>
public sealed record TableHypothesis
{
    public string? Name { get; init; }
    public double Prior { get; init; } = 1.0;
    /// <summary>Item id → predicted label name. Items missing here are predicted with their true label.</summary>
    public required IReadOnlyDictionary<string, string> Predictions { get; init; }
}

/// <summary>The learner model the teacher assumes (DESIGN 2.2).</summary>
public sealed record LearnerSettings
{
    public double Alpha { get; init; } = 1.5;
    public double Lapse { get; init; } = 0.05;
}

/// <summary>The release rule (DESIGN 2.5).</summary>
public sealed record GateSettings
{
    public double TargetError { get; init; } = 0.1;
    public double Confidence { get; init; } = 0.8;
    public int MaxTeachingItems { get; init; } = 40;
    public TestSettings Test { get; init; } = new();
    /// <summary>Tests after the first; beta is spent over all attempts (see <c>GateDesign</c>).</summary>
    public int Retakes { get; init; } = 1;
    /// <summary>Also require the belief after the test answers to meet the target.</summary>
    public bool RequireBeliefAfterTest { get; init; }
    /// <summary>
    /// Teaching ends only after this many right answers in a row (besides the belief's own criterion), so an
    /// annotator who still makes mistakes the model did not expect keeps being taught; 0 turns the rule off.
    /// </summary>
    public int MasteryStreak { get; init; } = 3;
    /// <summary>
    /// Each mistake made in remediation (the belief satisfied, the streak not yet reached: a mistake the model did not
    /// expect) lengthens the streak needed by this many answers, up to three times this many; 0 turns it off.
    /// </summary>
    public int MasteryExtension { get; init; } = 3;
    /// <summary>
    /// How items are chosen while the belief is satisfied but the annotator's answers are not (the mastery streak
    /// not yet reached): <c>representative</c> (uniformly from the unshown teach items, so the pool's spread of
    /// cases is covered) or <c>policy</c> (the policy's own choice).
    /// </summary>
    public string Remediation { get; init; } = RemediationModes.Representative;
    /// <summary>
    /// The adaptive policy's preference for typical items: each positive gain is multiplied by the item's typicality
    /// (the share of rules within target + delta/2 that label it right, see <c>ItemTypicality</c>) to this power, so
    /// exceptions that only the target and a few close rules get right come later. 0 (the default) turns it off:
    /// it helps learners unlike the model but lowers the release precision of those who learn as assumed
    /// (docs/robustness.md).
    /// </summary>
    public double TypicalityWeight { get; init; }
    /// <summary>
    /// The adaptive policy's first this many teaching items are drawn (seeded per session) among the items whose gain is
    /// within <c>SessionOptions.OpeningTolerance</c> of the best, so annotators do not all see the same opening (and
    /// the first items of a project are not all its sharpest exceptions); 0 keeps the single best. Kept with each
    /// session, so a replay draws the same items.
    /// </summary>
    public int OpeningVariety { get; init; } = 3;
}

public static class RemediationModes
{
    public const string Representative = "representative";
    public const string Policy = "policy";
}

/// <summary>
/// The held-out test of one attempt. Rates are exact and stated on rule error, the lapse rate mapped in: P(fail) ≤
/// alpha for an annotator whose rule error is the target, P(release over all attempts) ≤ beta for one at
/// target + delta. The defaults need at most 50 items (two labels, lapse 0.05, one retake).
/// </summary>
public sealed record TestSettings
{
    /// <summary><c>sequential</c> (exact truncated sequential test), <c>fixed</c> (all items, then one cut) or <c>belief</c> (see <see cref="TestModes.Belief"/>).</summary>
    public string Mode { get; init; } = TestModes.Sequential;
    /// <summary>Most items one attempt counts; the test pool should hold (retakes + 1) × this many.</summary>
    public int MaxItems { get; init; } = 50;
    /// <summary>Indifference width: the test separates error ≤ target from error ≥ target + delta.</summary>
    public double Delta { get; init; } = 0.2;
    /// <summary>Largest probability of failing an annotator exactly at target, per attempt.</summary>
    public double Alpha { get; init; } = 0.1;
    /// <summary>Largest probability of releasing an annotator at target + delta, over all attempts.</summary>
    public double Beta { get; init; } = 0.1;
    /// <summary>
    /// Sequential mode: after the test decides, 0 to this many further items (uniformly) are served and recorded
    /// but not counted, so the answer that decided cannot be told from the attempt's end.
    /// </summary>
    public int TailItems { get; init; } = 4;
    /// <summary>Belief mode: counted test answers needed before the belief may release.</summary>
    public int MinItems { get; init; } = 4;
    /// <summary>
    /// Exposure target r_max: the share of tested sessions any one test item should be shown to, in (0, 1]. Above it,
    /// an item drawn for a test is passed over with probability 1 − r_max / (its observed rate) (Sympson &amp; Hetter
    /// 1985). 1 (the default) turns exposure control off.
    /// </summary>
    public double MaxExposure { get; init; } = 1.0;
}

public static class TestModes
{
    public const string Sequential = "sequential";
    public const string Fixed = "fixed";
    /// <summary>The belief (with guessing and unexplained sources) may release early; the sequential test guards.</summary>
    public const string Belief = "belief";
}

public static class PolicyNames
{
    public const string Random = "random";
    public const string Cover = "cover";
    public const string StochasticGreedy = "stochastic-greedy";
    public const string Adaptive = "adaptive";
    public const string EasyFirst = "easy-first";
    public static readonly IReadOnlyList<string> All = [Random, Cover, StochasticGreedy, Adaptive, EasyFirst];
}

public static class FamilyKinds
{
    public const string Linear = "linear";
    public const string Cues = "cues";
    public const string Stumps = "stumps";
    public const string Table = "table";
    /// <summary>Linear rules over principal components of the server's embeddings of the item texts.</summary>
    public const string Text = "text";
    /// <summary>Linear rules over principal components of the vectors the platform sent with the items.</summary>
    public const string Embedding = "embedding";
    public static readonly IReadOnlyList<string> All = [Linear, Cues, Stumps, Table, Text, Embedding];

    /// <summary>Families whose rules are built on item vectors (reduced by <see cref="EmbeddingFeatures"/>).</summary>
    public static bool UsesVectors(string? kind) => kind is Text or Embedding;
}
