namespace TeachServe.Core.Projects;

/// <summary>
/// The allowed range of each learner and gate setting, shared by the project validator and the experiment
/// validator (an arm's overrides must obey the same ranges as a project's settings). Each rule returns
/// <see langword="null"/> for an allowed value, else the message for a person to read. Comparisons are written
/// so that NaN fails them.
/// </summary>
internal static class SettingRules
{
    public static string? LearnerAlpha(double alpha) =>
        alpha > 0 && double.IsFinite(alpha) ? null : $"must be a finite number > 0, not {alpha}";

    public static string? LearnerLapse(double lapse) =>
        lapse >= 0 && lapse <= 1 ? null : $"must be in [0, 1], not {lapse}";

    public static string? Policy(string? policy) =>
        policy is not null && PolicyNames.All.Contains(policy) ? null : $"unknown policy '{policy}'; expected {string.Join(", ", PolicyNames.All)}";

    public static string? BlendWeight(double weight) =>
        weight >= 0 && double.IsFinite(weight) ? null : $"must be a finite number ≥ 0, not {weight}";

    public static string? TargetError(double targetError) =>
        IsOpenUnit(targetError) ? null : $"must be in (0, 1), not {targetError}";

    public static string? Confidence(double confidence) =>
        IsOpenUnit(confidence) ? null : $"must be in (0, 1), not {confidence}";

    public static string? MaxTeachingItems(int items) => items >= 1 ? null : $"must be ≥ 1, not {items}";

    public static string? MasteryStreak(int streak) => streak is >= 0 and <= 20 ? null : $"must be in [0, 20], not {streak}";

    public static string? MasteryExtension(int extension) => extension is >= 0 and <= 10 ? null : $"must be in [0, 10], not {extension}";

    public static string? Remediation(string? mode) =>
        mode is RemediationModes.Representative or RemediationModes.Policy ? null : $"unknown remediation '{mode}'; expected {RemediationModes.Representative} or {RemediationModes.Policy}";

    public static string? OpeningVariety(int items) => items is >= 0 and <= 10 ? null : $"must be in [0, 10], not {items}";
    public static string? TypicalityWeight(double weight) => weight is >= 0 and <= 10 ? null : $"must be in [0, 10], not {weight}";

    public static string? Retakes(int retakes) => retakes >= 0 ? null : $"must be ≥ 0, not {retakes}";

    public static string? TestMode(string? mode) =>
        mode is TestModes.Sequential or TestModes.Fixed or TestModes.Belief ? null : $"unknown test mode '{mode}'; expected {TestModes.Sequential}, {TestModes.Fixed} or {TestModes.Belief}";

    public static string? TestMinItems(int items) => items is >= 1 and <= LongestTest ? null : $"must be in [1, {LongestTest}], not {items}";

    public const int LongestTest = 500;

    public static string? TestMaxItems(int items) => items is >= 1 and <= LongestTest ? null : $"must be in [1, {LongestTest}], not {items}";

    public static string? Cost(double value) =>
        value >= 0 && value <= 1e9 ? null : $"must be a finite number in [0, 1e9], not {value}";

    public static string? SecondsPerItem(double value) =>
        value > 0 && value <= 86_400 ? null : $"must be in (0, 86400] seconds, not {value}";

    public static string? TestMaxExposure(double share) => share > 0 && share <= 1 ? null : $"must be a share of sessions in (0, 1], not {share}";

    public static string? TestTailItems(int items) => items is >= 0 and <= 20 ? null : $"must be in [0, 20], not {items}";

    /// <summary>
    /// Whether a test of the gate's length can keep its error rates (exactly, lapses mapped in, beta spent over
    /// every attempt); call it only when every single setting is in range. The message names the closest rates and
    /// the length needed.
    /// </summary>
    public static string? TestDesign(GateSettings gate, int labelCount, double lapse) =>
        labelCount < 2 || !(lapse >= 0 && lapse < 1) || Teaching.GateDesign.TryCreate(gate, labelCount, lapse, out _, out var shortfall)
            ? null
            : $"{shortfall} Settings: targetError {gate.TargetError}, delta {gate.Test.Delta}, alpha {gate.Test.Alpha}, beta {gate.Test.Beta} over {gate.Retakes + 1} attempt(s), lapse {lapse}, {labelCount} labels.";

    /// <summary>
    /// The indifference width of the test. With a <paramref name="targetError"/> the sum must stay below 1 (the
    /// alternative error rate of the SPRT); pass <see langword="null"/> when the target is unknown or already
    /// reported as out of range, so that one bad value is reported once.
    /// </summary>
    public static string? TestDelta(double delta, double? targetError)
    {
        if (!(delta > 0))
            return $"must be > 0, not {delta}";
        if (targetError is { } target && !(target + delta < 1))
            return $"targetError + delta must be < 1, not {target} + {delta}";
        return null;
    }

    public static string? TestAlpha(double alpha) => alpha > 0 && alpha < 0.5 ? null : $"must be in (0, 0.5), not {alpha}";

    public static string? TestBeta(double beta) => beta > 0 && beta < 0.5 ? null : $"must be in (0, 0.5), not {beta}";

    /// <summary><paramref name="targetError"/> when it is in range, so that the delta rule may check the sum against it.</summary>
    public static double? ValidTargetError(double targetError) => TargetError(targetError) is null ? targetError : null;

    private static bool IsOpenUnit(double value) => value > 0 && value < 1;
}
