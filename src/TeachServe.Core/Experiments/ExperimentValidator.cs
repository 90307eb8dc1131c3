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

    /// <param name="definition">The experiment to check.</param>
    /// <param name="baseGate">
    /// The project's gate the arms override, when known: an override of only the target error or only the test's
    /// delta is then also checked for <c>targetError + delta &lt; 1</c> against the other, base value. Without it
    /// that rule is checked only for arms that override both.
    /// </param>
    public static IReadOnlyList<ExperimentProblem> Validate(ExperimentDefinition definition, GateSettings? baseGate = null)
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
        if (!(mde > 0 && mde < 1))
            Check("minimumDetectableEffect", $"must be in (0, 1), not {mde}");

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
                Gate(FieldPath.Member(path, "gate"), gate, baseGate, Check);
        }

        if (definition.Weights is { } weights)
        {
            if (weights.Count != arms.Count)
                Check("weights", $"one weight per arm is needed: {arms.Count} arms, {weights.Count} weights");
            for (var i = 0; i < weights.Count; i++)
            {
                if (!(weights[i] > 0 && double.IsFinite(weights[i])))
                    Check(FieldPath.Index("weights", i), $"must be a finite number > 0, not {weights[i]}");
            }
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
