using TeachServe.Core.Statistics;

namespace TeachServe.Core.Experiments;

/// <summary>
/// Computes an experiment's report from its annotators' outcomes (DESIGN 2.7): per-arm rates, means and medians
/// with intervals, every arm against the control, Holm adjustment of the primary metric, always-valid p-values,
/// the sample-ratio-mismatch check and the sample planner. Pure; never throws on empty or one-sided arms.
/// </summary>
public static class ExperimentReport
{
    /// <summary>The sample-ratio-mismatch p-value below which the report warns.</summary>
    public const double MismatchThreshold = 0.001;

    /// <summary>A cell count below which the z test's normal approximation is not trusted and Fisher's test is read.</summary>
    public const int SmallCell = 5;

    public static ExperimentReportResult Compute(ExperimentDefinition definition, IReadOnlyList<AnnotatorOutcome> outcomes) =>
        Compute(definition, outcomes, new ExperimentReportOptions());

    /// <exception cref="ArgumentException">The definition has problems (see <see cref="ExperimentValidator"/>), or an outcome is impossible (arm out of range, errors above answers, negative counts).</exception>
    public static ExperimentReportResult Compute(ExperimentDefinition definition, IReadOnlyList<AnnotatorOutcome> outcomes, ExperimentReportOptions options)
    {
        ArgumentNullException.ThrowIfNull(definition);
        ArgumentNullException.ThrowIfNull(outcomes);
        ArgumentNullException.ThrowIfNull(options);
        var problems = ExperimentValidator.Validate(definition);
        if (problems.Count > 0)
            throw new ArgumentException("The experiment definition is invalid: " + string.Join("; ", problems), nameof(definition));
        if (!(options.PlannedPower is > 0 and < 1) || !(options.PlanningAlpha is > 0 and < 1))
            throw new ArgumentException("The planned power and alpha must lie in (0, 1).", nameof(options));
        ValidateOutcomes(outcomes, definition.Arms.Count);

        var weights = definition.AllocationWeights();
        var weightTotal = weights.Sum();
        var control = definition.ControlArmIndex();
        var tau2 = definition.MinimumDetectableEffect * definition.MinimumDetectableEffect;
        var byArm = new List<AnnotatorOutcome>[definition.Arms.Count];
        for (var i = 0; i < byArm.Length; i++)
            byArm[i] = [];
        foreach (var o in outcomes)
            byArm[o.Arm].Add(o);

        var arms = new ArmSummary[byArm.Length];
        for (var i = 0; i < arms.Length; i++)
            arms[i] = Summarise(i, definition.Arms[i].Name, weights[i] / weightTotal, byArm[i], options.Cost);

        var plan = Plan(definition, arms[control], options);
        var comparisons = new List<ArmComparison>();
        for (var i = 0; i < arms.Length; i++)
        {
            if (i != control)
                comparisons.Add(Compare(definition.PrimaryMetric, arms[i], byArm[i], arms[control], byArm[control], tau2, plan));
        }

        var adjusted = MultipleTesting.Holm([.. comparisons.Select(c => c.PrimaryPValue)]);
        for (var k = 0; k < comparisons.Count; k++)
            comparisons[k] = comparisons[k] with { PrimaryAdjustedPValue = adjusted[k] };

        var srm = SampleRatio.ChiSquare([.. arms.Select(a => (long)a.Started)], weights);
        var check = new SampleRatioCheck(srm, srm.PValue < MismatchThreshold);
        return new ExperimentReportResult
        {
            Experiment = definition.Name,
            PrimaryMetric = definition.PrimaryMetric,
            ControlArm = control,
            Arms = arms,
            Comparisons = comparisons,
            SampleRatio = check,
            Plan = plan,
            AlwaysValidTau2 = tau2,
            Warnings = Warnings(check, comparisons, definition.PrimaryMetric),
        };
    }

    private static void ValidateOutcomes(IReadOnlyList<AnnotatorOutcome> outcomes, int armCount)
    {
        for (var i = 0; i < outcomes.Count; i++)
        {
            var o = outcomes[i] ?? throw new ArgumentException($"outcomes[{i}] is null.", nameof(outcomes));
            if (o.Arm < 0 || o.Arm >= armCount)
                throw new ArgumentException($"outcomes[{i}].arm is {o.Arm}; the experiment has {armCount} arms.", nameof(outcomes));
            if (o.TestAnswered < 0 || o.TestErrors < 0 || o.TestErrors > o.TestAnswered)
                throw new ArgumentException($"outcomes[{i}] has {o.TestErrors} test errors of {o.TestAnswered} answers.", nameof(outcomes));
            if (o.TeachingItems < 0)
                throw new ArgumentException($"outcomes[{i}].teachingItems is negative.", nameof(outcomes));
        }
    }

    private static ArmSummary Summarise(int arm, string name, double share, List<AnnotatorOutcome> outcomes, Projects.CostSettings cost)
    {
        var ended = outcomes.Where(o => o.HasEnded).ToList();
        double teachingItems = ended.Sum(o => (double)o.TeachingItems), testItems = ended.Sum(o => (double)o.TestAnswered);
        var paid = (teachingItems * cost.PerTeachingItem) + (testItems * cost.PerTestItem) + ((teachingItems + testItems) * cost.SecondsPerItem / 60.0 * cost.PerMinute);
        var tested = Tested(outcomes);
        var errors = tested.Select(o => o.TestError).ToArray();
        int answers = tested.Sum(o => o.TestAnswered), wrong = tested.Sum(o => o.TestErrors);
        var finished = outcomes.Count(o => o.HasEnded);
        var released = outcomes.Where(o => o.Released).ToList();
        return new ArmSummary
        {
            Arm = arm,
            Name = name,
            PlannedShare = share,
            Started = outcomes.Count,
            Finished = finished,
            Released = released.Count,
            Tested = tested.Count,
            MeanTestError = errors.Length == 0 ? double.NaN : errors.Average(),
            MeanTestErrorInterval = MeanTests.MeanTInterval(errors),
            TestAnswers = answers,
            TestErrors = wrong,
            PooledTestError = Rate(wrong, answers),
            PooledTestErrorInterval = ProportionIntervals.Wilson(wrong, answers),
            ReleaseRate = Rate(released.Count, finished),
            ReleaseRateInterval = ProportionIntervals.Wilson(released.Count, finished),
            MedianItemsToRelease = ReportSeries.Median(released.Select(o => (double)o.TeachingItems)),
            MedianTimeToRelease = ReportSeries.Median(released.Where(o => o.TimeToRelease.HasValue).Select(o => o.TimeToRelease!.Value)),
            ItemsPerRelease = released.Count == 0 ? double.NaN : (teachingItems + testItems) / released.Count,
            CostPerRelease = released.Count == 0 ? double.NaN : paid / released.Count,
            LearningCurve = ReportSeries.LearningCurve(outcomes),
            TestErrorHistogram = ReportSeries.TestErrorHistogram(tested),
        };
    }

    /// <summary>Finished annotators with a test answer: a test still under way would count a partial, early-stopped score.</summary>
    private static List<AnnotatorOutcome> Tested(List<AnnotatorOutcome> outcomes) =>
        [.. outcomes.Where(o => o.HasEnded && o.TestAnswered > 0)];

    private static ArmComparison Compare(
        string metric, ArmSummary arm, List<AnnotatorOutcome> armOutcomes, ArmSummary control, List<AnnotatorOutcome> controlOutcomes,
        double tau2, SamplePlan? plan)
    {
        var testError = Proportions(arm.TestErrors, arm.TestAnswers, control.TestErrors, control.TestAnswers, tau2);
        var releaseRate = Proportions(arm.Released, arm.Finished, control.Released, control.Finished, tau2);
        var welch = MeanTests.WelchT([.. Tested(armOutcomes).Select(o => o.TestError)], [.. Tested(controlOutcomes).Select(o => o.TestError)]);
        var items = MeanTests.WelchT(ItemsToRelease(armOutcomes), ItemsToRelease(controlOutcomes));
        var (primary, alwaysValid, planned) = metric switch
        {
            ExperimentMetrics.TestError => (welch.PValue, testError.AlwaysValidPValue, testError),
            ExperimentMetrics.ReleaseRate => (releaseRate.ReadFisher ? releaseRate.FisherPValue : releaseRate.ZTest.PValue, releaseRate.AlwaysValidPValue, releaseRate),
            _ => (items.PValue, double.NaN, null),
        };
        var power = plan is null || planned is null || double.IsNaN(plan.Alternative)
            ? double.NaN
            : SamplePlanner.TwoProportionPower(Math.Min(planned.Trials, planned.ControlTrials), plan.Baseline, plan.Alternative, plan.Alpha);
        return new ArmComparison
        {
            Arm = arm.Arm,
            Name = arm.Name,
            TestError = testError,
            ReleaseRate = releaseRate,
            MeanTestErrorDifference = arm.MeanTestError - control.MeanTestError,
            TestErrorWelch = welch,
            ItemsToReleaseWelch = items,
            PrimaryPValue = primary,
            PrimaryAdjustedPValue = double.NaN, // set once all arms are compared
            PrimaryAlwaysValidPValue = alwaysValid,
            CurrentPower = power,
        };
    }

    private static double[] ItemsToRelease(List<AnnotatorOutcome> outcomes) =>
        [.. outcomes.Where(o => o.Released).Select(o => (double)o.TeachingItems)];

    private static ProportionComparison Proportions(int x1, int n1, int x2, int n2, double tau2)
    {
        var empty = n1 == 0 || n2 == 0;
        int a = x1, b = n1 - x1, c = x2, d = n2 - x2;
        return new ProportionComparison
        {
            Events = x1,
            Trials = n1,
            ControlEvents = x2,
            ControlTrials = n2,
            Difference = empty ? double.NaN : Rate(x1, n1) - Rate(x2, n2),
            DifferenceInterval = TwoProportions.NewcombeDifference(x1, n1, x2, n2),
            ZTest = TwoProportions.PooledZTest(x1, n1, x2, n2),
            FisherPValue = empty ? double.NaN : TwoProportions.FisherExactTwoSided(a, b, c, d),
            ReadFisher = Math.Min(Math.Min(a, b), Math.Min(c, d)) < SmallCell,
            AlwaysValidPValue = AlwaysValid.TwoProportionPValue(x1, n1, x2, n2, tau2),
        };
    }

    private static SamplePlan? Plan(ExperimentDefinition definition, ArmSummary control, ExperimentReportOptions options)
    {
        var (unit, observed, improvement) = definition.PrimaryMetric switch
        {
            ExperimentMetrics.TestError => ("test answers", control.PooledTestError, -1.0),
            ExperimentMetrics.ReleaseRate => ("finished annotators", control.ReleaseRate, 1.0),
            _ => (null, double.NaN, 0.0),
        };
        if (unit is null)
            return null;

        var isObserved = observed is > 0 and < 1;
        var baseline = isObserved ? observed : 0.5;
        var mde = definition.MinimumDetectableEffect;
        var alternative = baseline + (improvement * mde);
        if (!(alternative is > 0 and < 1))
            alternative = baseline - (improvement * mde);
        if (!(alternative is > 0 and < 1))
            alternative = double.NaN;
        var required = double.IsNaN(alternative)
            ? double.NaN
            : SamplePlanner.TwoProportionSampleSize(baseline, alternative, options.PlannedPower, options.PlanningAlpha);
        return new SamplePlan(unit, baseline, isObserved, alternative, options.PlannedPower, options.PlanningAlpha, required);
    }

    private static string[] Warnings(SampleRatioCheck check, List<ArmComparison> comparisons, string metric)
    {
        var warnings = new List<string>();
        if (check.Mismatch)
        {
            warnings.Add(FormattableString.Invariant(
                $"sample-ratio mismatch: the started counts do not fit the planned weights (χ² = {check.Test.Statistic:G4}, p = {check.Test.PValue:G3}); the assignment may be broken, do not trust the comparisons"));
        }

        foreach (var c in comparisons)
        {
            var planned = metric switch
            {
                ExperimentMetrics.TestError => c.TestError,
                ExperimentMetrics.ReleaseRate => c.ReleaseRate,
                _ => null,
            };
            if (planned is { ReadFisher: true, Trials: > 0, ControlTrials: > 0 })
                warnings.Add($"{c.Name}: a cell of the 2×2 table is below {SmallCell}; read the Fisher exact p-value, not the z test");
        }

        return [.. warnings];
    }

    private static double Rate(int events, int trials) => trials == 0 ? double.NaN : (double)events / trials;
}
