using TeachServe.Core.Projects;

namespace TeachServe.Core.Experiments;

/// <summary>
/// Checks an experiment definition: arm count and names, policies, allocation weights, primary metric, minimum
/// detectable effect, control arm, salt, and every arm override against the same ranges as a project's settings
/// (<see cref="SettingRules"/>). Returns every problem; never throws for bad data.
/// </summary>
public static class ExperimentValidator
{
    public const int MinArms = 2;
    public const int MaxArms = 10;

    /// <summary>
    /// The smallest minimum detectable effect: below it the sample-size plan needs more annotators than exist
    /// (at 0.001 and a baseline of 0.5, about 7.8 million per arm), and its arithmetic loses meaning long before 1e-300.
    /// </summary>
    public const double MinDetectableEffect = 0.001;

    /// <summary>The largest allocation weight; weights are relative, so a ratio of a million to one is already extreme.</summary>
    public const double MaxWeight = 1e6;

    /// <param name="definition">The experiment to check.</param>
    /// <param name="baseGate">
    /// The project's gate the arms override, when known: an override of only the target error or only the test's
    /// delta is then also checked for <c>targetError + delta &lt; 1</c> against the other, base value. Without it
    /// that rule is checked only for arms that override both.
    /// </param>
    /// <param name="labelCount">The project's label count; with <paramref name="lapse"/> and the base gate, each arm's whole gate is checked for a test that keeps its error rates.</param>
    /// <param name="lapse">The project's lapse rate.</param>
    public static IReadOnlyList<ExperimentProblem> Validate(ExperimentDefinition definition, GateSettings? baseGate = null, int? labelCount = null, double? lapse = null)
    {
        ArgumentNullException.ThrowIfNull(definition);
        var problems = new List<ExperimentProblem>();
        void Check(string field, string? message)
        {
            if (message is not null)
                problems.Add(new ExperimentProblem(field, message));
        }

        if (string.IsNullOrWhiteSpace(definition.Name))
            Check("name", "the experiment name is empty");
        if (string.IsNullOrEmpty(definition.Salt))
            Check("salt", "the salt is empty");
        else if (definition.Salt.Contains('\n', StringComparison.Ordinal))
            Check("salt", "the salt must not contain a line break");
        if (!ExperimentMetrics.All.Contains(definition.PrimaryMetric))
            Check("primaryMetric", $"unknown metric '{definition.PrimaryMetric}'; expected {string.Join(", ", ExperimentMetrics.All)}");
        var mde = definition.MinimumDetectableEffect;
        if (!(mde >= MinDetectableEffect && mde < 1))
            Check("minimumDetectableEffect", FormattableString.Invariant($"must be in [{MinDetectableEffect}, 1), not {mde}"));

        var arms = definition.Arms;
        if (arms is null)
        {
            Check("arms", "the arms are missing");
            return problems;
        }
        if (arms.Count is < MinArms or > MaxArms)
            Check("arms", $"an experiment needs {MinArms} to {MaxArms} arms, not {arms.Count}");

        var names = new Dictionary<string, int>(StringComparer.Ordinal);
        for (var i = 0; i < arms.Count; i++)
        {
            var path = FieldPath.Index("arms", i);
            if (arms[i] is not { } arm)
            {
                Check(path, "the arm is null");
                continue;
            }
            if (string.IsNullOrWhiteSpace(arm.Name))
                Check(FieldPath.Member(path, "name"), "the arm name is empty");
            else if (!names.TryAdd(arm.Name, i))
                Check(FieldPath.Member(path, "name"), $"'{arm.Name}' is already the name of arms[{names[arm.Name]}]");
            Check(FieldPath.Member(path, "policy"), SettingRules.Policy(arm.Policy));
            if (arm.LearnerAlpha is { } alpha)
                Check(FieldPath.Member(path, "learnerAlpha"), SettingRules.LearnerAlpha(alpha));
            if (arm.BlendWeight is { } blend)
                Check(FieldPath.Member(path, "blendWeight"), SettingRules.BlendWeight(blend));
            if (arm.Gate is { } gate)
            {
                var before = problems.Count;
                Gate(FieldPath.Member(path, "gate"), gate, baseGate, Check);
                if (problems.Count == before && baseGate is not null && labelCount is { } k && lapse is { } l)
                    Check(FieldPath.Member(path, "gate.test.maxItems"), SettingRules.TestDesign(gate.ApplyTo(baseGate), k, l));
            }
        }

        if (definition.Weights is { } weights)
        {
            if (weights.Count != arms.Count)
                Check("weights", $"one weight per arm is needed: {arms.Count} arms, {weights.Count} weights");
            var sum = 0.0;
            var each = true;
            for (var i = 0; i < weights.Count; i++)
            {
                sum += weights[i];
                if (!(weights[i] > 0 && weights[i] <= MaxWeight))
                {
                    each = false;
                    Check(FieldPath.Index("weights", i), FormattableString.Invariant($"must be a finite number in (0, {MaxWeight:G}], not {weights[i]}"));
                }
            }
            // Each weight in range keeps the sum finite; checked anyway, because the report divides by it.
            if (each && !double.IsFinite(sum))
                Check("weights", FormattableString.Invariant($"the weights must sum to a finite number, not {sum}"));
        }

        if (definition.ControlArm is { } control && definition.ControlArmIndex() < 0)
            Check("controlArm", $"no arm is named '{control}'");
        return problems;
    }

    private static void Gate(string path, GateOverride gate, GateSettings? baseGate, Action<string, string?> check)
    {
        if (gate.TargetError is { } target)
            check(FieldPath.Member(path, "targetError"), SettingRules.TargetError(target));
        if (gate.Confidence is { } confidence)
            check(FieldPath.Member(path, "confidence"), SettingRules.Confidence(confidence));
        if (gate.MaxTeachingItems is { } items)
            check(FieldPath.Member(path, "maxTeachingItems"), SettingRules.MaxTeachingItems(items));
        if (gate.Retakes is { } retakes)
            check(FieldPath.Member(path, "retakes"), SettingRules.Retakes(retakes));
        if (gate.MasteryStreak is { } streak)
            check(FieldPath.Member(path, "masteryStreak"), SettingRules.MasteryStreak(streak));
        if (gate.MasteryExtension is { } extension)
            check(FieldPath.Member(path, "masteryExtension"), SettingRules.MasteryExtension(extension));
        if (gate.Remediation is { } remediation)
            check(FieldPath.Member(path, "remediation"), SettingRules.Remediation(remediation));
        if (gate.TypicalityWeight is { } typicality)
            check(FieldPath.Member(path, "typicalityWeight"), SettingRules.TypicalityWeight(typicality));
        if (gate.OpeningVariety is { } opening)
            check(FieldPath.Member(path, "openingVariety"), SettingRules.OpeningVariety(opening));

        var test = gate.Test;
        var testPath = FieldPath.Member(path, "test");
        if (test is not null)
        {
            if (test.Mode is { } mode)
                check(FieldPath.Member(testPath, "mode"), SettingRules.TestMode(mode));
            if (test.MaxItems is { } maxItems)
                check(FieldPath.Member(testPath, "maxItems"), SettingRules.TestMaxItems(maxItems));
            if (test.Alpha is { } alpha)
                check(FieldPath.Member(testPath, "alpha"), SettingRules.TestAlpha(alpha));
            if (test.Beta is { } beta)
                check(FieldPath.Member(testPath, "beta"), SettingRules.TestBeta(beta));
            if (test.TailItems is { } tail)
                check(FieldPath.Member(testPath, "tailItems"), SettingRules.TestTailItems(tail));
        }

        // targetError + delta < 1 needs both values: each comes from the override or, when known, the base gate.
        // A value already out of range is reported once, at its own field.
        var effectiveTarget = gate.TargetError ?? baseGate?.TargetError;
        var validTarget = effectiveTarget is { } t ? SettingRules.ValidTargetError(t) : null;
        if (test?.Delta is { } delta)
        {
            check(FieldPath.Member(testPath, "delta"), SettingRules.TestDelta(delta, validTarget));
        }
        else if (gate.TargetError is not null && validTarget is { } overridden && baseGate?.Test is { } baseTest
                 && baseTest.Delta > 0 && SettingRules.TestDelta(baseTest.Delta, overridden) is { } message)
        {
            check(FieldPath.Member(path, "targetError"), message);
        }
    }
}
