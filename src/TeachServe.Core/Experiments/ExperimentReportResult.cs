using TeachServe.Core.Statistics;

namespace TeachServe.Core.Experiments;

/// <summary>
/// The state of an experiment: one summary per arm and one comparison per non-control arm. Undefined numbers are
/// NaN and never exceptions: an empty arm has NaN rates and means, intervals are the whole range where a method
/// has no data (Wilson [0, 1], Newcombe [−1, 1], as <see cref="ProportionIntervals"/> and
/// <see cref="TwoProportions"/> document) and (NaN, NaN) for the t interval with fewer than two annotators.
/// </summary>
public sealed record ExperimentReportResult
{
    public required string Experiment { get; init; }
    public required string PrimaryMetric { get; init; }
    public required int ControlArm { get; init; }
    /// <summary>One per arm, in arm order.</summary>
    public required IReadOnlyList<ArmSummary> Arms { get; init; }
    /// <summary>One per arm other than the control, in arm order.</summary>
    public required IReadOnlyList<ArmComparison> Comparisons { get; init; }
    public required SampleRatioCheck SampleRatio { get; init; }
    /// <summary>Sample size for the minimum detectable effect; <see langword="null"/> for <c>items-to-release</c>, which is not a proportion.</summary>
    public required SamplePlan? Plan { get; init; }
    /// <summary>The mixing variance τ² = MDE² of the always-valid p-values.</summary>
    public required double AlwaysValidTau2 { get; init; }
    /// <summary>Things the reader must know before trusting the numbers (sample-ratio mismatch, small cells), for a person to read.</summary>
    public required IReadOnlyList<string> Warnings { get; init; }
}

/// <summary>One arm's numbers.</summary>
public sealed record ArmSummary
{
    public required int Arm { get; init; }
    public required string Name { get; init; }
    /// <summary>The planned share of annotators, weight / Σ weights.</summary>
    public required double PlannedShare { get; init; }
    public required int Started { get; init; }
    /// <summary>Sessions that ended (released or failed).</summary>
    public required int Finished { get; init; }
    public required int Released { get; init; }

    /// <summary>Finished annotators with at least one test answer: the ones the test-error numbers are over (a test still under way is not counted).</summary>
    public required int Tested { get; init; }
    /// <summary>Mean over <see cref="Tested"/> annotators of their test error; NaN when none.</summary>
    public required double MeanTestError { get; init; }
    /// <summary>Student t 95 % interval of <see cref="MeanTestError"/>; (NaN, NaN) with fewer than two.</summary>
    public required Interval MeanTestErrorInterval { get; init; }
    /// <summary>Test answers of the tested annotators.</summary>
    public required int TestAnswers { get; init; }
    public required int TestErrors { get; init; }
    /// <summary>TestErrors / TestAnswers; NaN when none.</summary>
    public required double PooledTestError { get; init; }
    /// <summary>Wilson 95 % interval of <see cref="PooledTestError"/> (treats answers as independent, which answers of one annotator are not).</summary>
    public required Interval PooledTestErrorInterval { get; init; }

    /// <summary>Released / Finished; NaN when none finished.</summary>
    public required double ReleaseRate { get; init; }
    /// <summary>Wilson 95 % interval of <see cref="ReleaseRate"/>.</summary>
    public required Interval ReleaseRateInterval { get; init; }
    /// <summary>Median teaching items of released annotators; NaN when none.</summary>
    public required double MedianItemsToRelease { get; init; }
    /// <summary>Median time to release of released annotators whose time is known; <see langword="null"/> when none.</summary>
    public required TimeSpan? MedianTimeToRelease { get; init; }
    /// <summary>All items (teaching and test) answered by the arm's ended annotators, over its releases; NaN when none.</summary>
    public double ItemsPerRelease { get; init; }
    /// <summary>
    /// What the arm's ended annotators cost (items and assumed minutes, priced by the project's cost settings, failures
    /// included), over its releases; NaN when none. Whether a real annotator's release was qualified is not known, so
    /// this is per release; the simulator reports the cost per qualified release.
    /// </summary>
    public double CostPerRelease { get; init; }

    /// <summary>Mean predicted error by teaching step; empty when no annotator has a learning curve.</summary>
    public required IReadOnlyList<LearningCurvePoint> LearningCurve { get; init; }
    /// <summary>Tested annotators' test error in 20 bins of width 0.05 over [0, 1] (the last bin is closed); always 20 bins.</summary>
    public required IReadOnlyList<HistogramBin> TestErrorHistogram { get; init; }
}

/// <summary>
/// Mean predicted error after <paramref name="Step"/> teaching items over <paramref name="Annotators"/> annotators,
/// with the 95 % normal band mean ± 1.96·s/√n ((NaN, NaN) when n &lt; 2).
/// </summary>
public readonly record struct LearningCurvePoint(int Step, int Annotators, double MeanPredictedError, double Low, double High);

/// <summary><paramref name="Count"/> values in [<paramref name="Low"/>, <paramref name="High"/>).</summary>
public readonly record struct HistogramBin(double Low, double High, int Count);

/// <summary>One arm against the control arm. Differences are arm − control.</summary>
public sealed record ArmComparison
{
    public required int Arm { get; init; }
    public required string Name { get; init; }

    /// <summary>Pooled test errors of test answers (tested annotators only).</summary>
    public required ProportionComparison TestError { get; init; }
    /// <summary>Released of finished annotators.</summary>
    public required ProportionComparison ReleaseRate { get; init; }

    /// <summary>Difference of <see cref="ArmSummary.MeanTestError"/>; NaN when an arm has no tested annotator.</summary>
    public required double MeanTestErrorDifference { get; init; }
    /// <summary>Welch t on per-annotator test error; NaN fields with fewer than two tested annotators in an arm or no variation.</summary>
    public required TestResult TestErrorWelch { get; init; }
    /// <summary>Welch t on the teaching items of released annotators; NaN as for <see cref="TestErrorWelch"/>.</summary>
    public required TestResult ItemsToReleaseWelch { get; init; }

    /// <summary>
    /// The p-value of the primary metric: <c>test-error</c> the per-annotator Welch t (answers cluster within
    /// annotators, so the annotator is the unit); <c>release-rate</c> the Fisher exact test when a cell is below 5,
    /// else the pooled z test; <c>items-to-release</c> its Welch t. NaN when that test is undefined.
    /// </summary>
    public required double PrimaryPValue { get; init; }
    /// <summary>Holm-adjusted <see cref="PrimaryPValue"/> across the non-control arms (NaN ones left out of the count).</summary>
    public required double PrimaryAdjustedPValue { get; init; }
    /// <summary>Always-valid p-value of the primary proportion (<see cref="ProportionComparison.AlwaysValidPValue"/>); NaN for <c>items-to-release</c>.</summary>
    public required double PrimaryAlwaysValidPValue { get; init; }
    /// <summary>Power of the planned comparison with the smaller of the two arms' current counts; NaN without a plan.</summary>
    public required double CurrentPower { get; init; }
}

/// <summary>Two proportions, arm (<c>Events</c> of <c>Trials</c>) against control.</summary>
public sealed record ProportionComparison
{
    public required int Events { get; init; }
    public required int Trials { get; init; }
    public required int ControlEvents { get; init; }
    public required int ControlTrials { get; init; }
    /// <summary>Arm proportion − control proportion; NaN when either has no trials.</summary>
    public required double Difference { get; init; }
    /// <summary>Newcombe hybrid score 95 % interval of the difference; [−1, 1] when either has no trials.</summary>
    public required Interval DifferenceInterval { get; init; }
    /// <summary>Pooled two-proportion z test; NaN when either has no trials or there is no variation.</summary>
    public required TestResult ZTest { get; init; }
    /// <summary>Fisher exact two-sided p-value of the 2×2 table; NaN when either has no trials.</summary>
    public required double FisherPValue { get; init; }
    /// <summary>A cell of the 2×2 table is below 5: read <see cref="FisherPValue"/>, not the z test.</summary>
    public required bool ReadFisher { get; init; }
    /// <summary>
    /// Always-valid p-value of this look by the two-proportion mixture SPRT (Johari, Pekelis &amp; Walsh 2017) with
    /// τ² = MDE²; 1 (no evidence) when either has no trials. It is the one-look value min(1, 1/Λ), which is never
    /// below the running minimum over earlier looks, so it is valid (if conservative) whenever it is read.
    /// </summary>
    public required double AlwaysValidPValue { get; init; }
}

/// <summary>Sample-ratio-mismatch check: Pearson χ² of the started counts against the planned weights.</summary>
/// <param name="Test">χ², k − 1 and p; NaN statistic and p when nobody started.</param>
/// <param name="Mismatch">p &lt; <see cref="ExperimentReport.MismatchThreshold"/>: the assignment is broken and the comparisons should not be trusted.</param>
public readonly record struct SampleRatioCheck(TestResult Test, bool Mismatch);

/// <summary>
/// Annotators (or test answers) per arm for the two-sided pooled z test to detect the minimum detectable effect,
/// by <see cref="SamplePlanner.TwoProportionSampleSize"/>.
/// </summary>
/// <param name="Unit"><c>finished annotators</c> (release rate) or <c>test answers</c> (test error).</param>
/// <param name="Baseline">The control's observed proportion when it lies in (0, 1), else 0.5.</param>
/// <param name="BaselineObserved">Whether <paramref name="Baseline"/> was observed rather than the 0.5 default.</param>
/// <param name="Alternative">Baseline moved by the MDE in the improving direction (test error down, release rate up), or the other way when that leaves (0, 1); NaN when neither fits.</param>
/// <param name="Power">The planned power.</param>
/// <param name="Alpha">The planned two-sided level.</param>
/// <param name="RequiredPerArm">Not rounded; NaN when <paramref name="Alternative"/> is NaN.</param>
public sealed record SamplePlan(string Unit, double Baseline, bool BaselineObserved, double Alternative, double Power, double Alpha, double RequiredPerArm);
