namespace TeachServe.Core.Experiments;

/// <summary>
/// An A/B test of teaching configurations: annotators are assigned to one of the arms by a stable hash of their
/// worker reference (<see cref="ArmAssignment"/>), and the report compares every arm with the control arm.
/// Check it with <see cref="ExperimentValidator.Validate"/> before use.
/// </summary>
public sealed record ExperimentDefinition
{
    public required string Name { get; init; }

    /// <summary>2 to <see cref="ExperimentValidator.MaxArms"/> arms with unique names.</summary>
    public required IReadOnlyList<ArmDefinition> Arms { get; init; }

    /// <summary>Allocation weight per arm, in arm order (positive, finite, need not sum to 1); <see langword="null"/> = equal weights.</summary>
    public IReadOnlyList<double>? Weights { get; init; }

    /// <summary>One of <see cref="ExperimentMetrics"/>: the metric whose p-values are Holm-adjusted and planned for.</summary>
    public string PrimaryMetric { get; init; } = ExperimentMetrics.TestError;

    /// <summary>
    /// The smallest difference of the primary proportion (test error or release rate, absolute) worth detecting,
    /// in (0, 1). It sizes the sample planner and sets the mixing variance τ² = MDE² of the always-valid p-values.
    /// </summary>
    public double MinimumDetectableEffect { get; init; } = 0.1;

    /// <summary>Name of the control arm; <see langword="null"/> = the first arm.</summary>
    public string? ControlArm { get; init; }

    /// <summary>
    /// Mixed into the assignment hash, so that two experiments assign the same worker independently. Must not be
    /// empty or contain a line break (the hash input is <c>salt + '\n' + workerRef</c>, which must be unambiguous).
    /// </summary>
    public required string Salt { get; init; }

    /// <summary>The allocation weights in effect: <see cref="Weights"/>, or 1 per arm when none are given.</summary>
    public IReadOnlyList<double> AllocationWeights() => Weights ?? [.. Enumerable.Repeat(1.0, Arms?.Count ?? 0)];

    /// <summary>Index of the control arm: the arm named <see cref="ControlArm"/>, or 0 when none is named; −1 when the name is unknown.</summary>
    public int ControlArmIndex()
    {
        if (ControlArm is null)
            return 0;
        for (var i = 0; i < (Arms?.Count ?? 0); i++)
        {
            if (string.Equals(Arms![i]?.Name, ControlArm, StringComparison.Ordinal))
                return i;
        }
        return -1;
    }
}

/// <summary>The primary metrics an experiment can be judged on.</summary>
public static class ExperimentMetrics
{
    /// <summary>Held-out test error per annotator (lower is better).</summary>
    public const string TestError = "test-error";

    /// <summary>Share of finished annotators who were released (higher is better).</summary>
    public const string ReleaseRate = "release-rate";

    /// <summary>Teaching items a released annotator needed (lower is better).</summary>
    public const string ItemsToRelease = "items-to-release";

    public static readonly IReadOnlyList<string> All = [TestError, ReleaseRate, ItemsToRelease];
}
