namespace TeachServe.Core.LiveQuality;

/// <summary>Names of the compared monitors.</summary>
public static class MonitorNames
{
    /// <summary>The Bernoulli CUSUM on live-check errors (model-free).</summary>
    public const string CountCusum = "count CUSUM";
    /// <summary>One CUSUM per candidate drift rule on the answers where it differs from the known label (model-based).</summary>
    public const string CandidateCusum = "candidate-rule CUSUM";
    /// <summary>One CUSUM per drift alternative on the log-likelihood ratio of each answer to the item checked (model-based).</summary>
    public const string ItemAwareCusum = "item-aware CUSUM";
    /// <summary>Common practice: alarm when the last W checks hold at least e errors.</summary>
    public const string Window = "fixed window";
}

/// <summary>One monitor at one limit and its in-control ARL, simulated on the released population.</summary>
/// <param name="Level">The limit (lattice steps for the count chart, weight units for the candidate charts, grid steps of <see cref="LiveQualityStudyOptions.ItemAwareStep"/> nats for the item-aware chart, errors in the window for the window rule).</param>
/// <param name="InControlRunLength">In-control checks per false alarm over all stable annotators, the chart restarting after each alarm.</param>
/// <param name="Censored">1 when no stable annotator alarmed at all (the value is then a lower bound), else 0.</param>
public sealed record MonitorLevel(string Monitor, int Level, double InControlRunLength, int Censored);

/// <summary>Detection delay of one monitor at one in-control ARL in one scenario, interpolated between its limits in log ARL0.</summary>
/// <param name="Delay">Mean checks from the change to the alarm, among runs with no alarm before the change.</param>
/// <param name="Low">95 % interval (normal, from the runs' spread).</param>
/// <param name="Runs">Runs counted.</param>
/// <param name="Excluded">Runs whose rule never went above target within the horizon (forgetting scenarios).</param>
public sealed record DelayAtRunLength(string Scenario, string Monitor, double RunLength, double Delay, double Low, double High, int Runs, int Excluded);

/// <summary>A monitor's delay relative to the fixed-window rule at the same in-control ARL (below 1: sooner).</summary>
public sealed record DelayRatio(string Scenario, string Monitor, double RunLength, double Ratio, double Low, double High);

/// <summary>The always-valid test: in-control alarms within the horizon (bound: α) and delays.</summary>
public sealed record MixtureSummary(double Alpha, int StableRuns, int StableAlarms, double AlarmRate, double AlarmRateLow, double AlarmRateHigh, IReadOnlyList<(string Scenario, double Delay, int Runs)> Delays);

/// <summary>Refreshers started at the deployed monitors' first alarm after the change.</summary>
/// <param name="MedianItems">Median teaching items.</param>
/// <param name="MedianErrorBefore">Median true answer error at the alarm.</param>
/// <param name="MedianErrorAfter">Median true answer error after the refresher.</param>
/// <param name="UnderTarget">Share of runs whose true answer error after the refresher is within the target answer error.</param>
/// <param name="Passed">Share whose check passed.</param>
public sealed record RefresherSummary(string Scenario, int Runs, double MedianItems, double MeanItems, double MedianErrorBefore, double MedianErrorAfter, double UnderTarget, double UnderTargetLow, double UnderTargetHigh, double Passed);

/// <summary>
/// The item-aware CUSUM a server would deploy: its limit calibrated by simulation for the deployed ARL0, and the pooled
/// ARL0 the study measured at that limit on its own stable annotators (other random numbers), with its standard error.
/// </summary>
/// <param name="Step">Nats per level of the study's sweep.</param>
public sealed record ItemAwareSummary(ItemAwareCusumDesign Design, double MeasuredRunLength, double MeasuredStandardError, int MeasuredAlarms, double Step);

public sealed record LiveQualityStudyResult
{
    public required double TargetAnswerError { get; init; }
    public required BernoulliCusumDesign Lattice { get; init; }
    public required int CandidateCount { get; init; }
    public required double CandidateCoverage { get; init; }
    public required double ReleasedAnswerError { get; init; }
    public required IReadOnlyList<string> Scenarios { get; init; }
    public required IReadOnlyList<MonitorLevel> Levels { get; init; }
    public required IReadOnlyList<DelayAtRunLength> Delays { get; init; }
    public required IReadOnlyList<DelayRatio> Ratios { get; init; }
    public required MixtureSummary Mixture { get; init; }
    public required ItemAwareSummary ItemAware { get; init; }
    public required IReadOnlyList<RefresherSummary> Refreshers { get; init; }
    public required LiveQualityStudyOptions Options { get; init; }
}
