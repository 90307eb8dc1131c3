using System.Text.Json.Serialization;

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
    /// <summary>Weight of the stochastic-greedy gain added to the adaptive gain (DESIGN 2.4); 2 was chosen by simulation on the seed projects (README).</summary>
    public double BlendWeight { get; init; } = 2.0;
    /// <summary>What the annotator page says when a session ends; absent means the page's own wording.</summary>
    public CompletionSettings? Completion { get; init; }
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

/// <summary>How the hypotheses of a project are generated (DESIGN 2.6).</summary>
public sealed record FamilySettings
{
    /// <summary><c>linear</c>, <c>cues</c>, <c>stumps</c> or <c>table</c>.</summary>
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
    public int Retakes { get; init; } = 1;
    /// <summary>Also require the belief after the test answers to meet the target.</summary>
    public bool RequireBeliefAfterTest { get; init; }
}

public sealed record TestSettings
{
    /// <summary><c>sequential</c> (Wald SPRT) or <c>fixed</c> (one-sided Wilson bound).</summary>
    public string Mode { get; init; } = TestModes.Sequential;
    public int MaxItems { get; init; } = 30;
    /// <summary>Indifference width: the test separates error ≤ target from error ≥ target + delta.</summary>
    public double Delta { get; init; } = 0.15;
    public double Alpha { get; init; } = 0.05;
    public double Beta { get; init; } = 0.1;
}

public static class TestModes
{
    public const string Sequential = "sequential";
    public const string Fixed = "fixed";
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
    public static readonly IReadOnlyList<string> All = [Linear, Cues, Stumps, Table];
}
