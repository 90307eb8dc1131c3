using TeachServe.Core.Experiments;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Experiments;

internal static class ExperimentSamples
{
    public static ExperimentDefinition Definition(int arms = 2, string metric = ExperimentMetrics.TestError, double mde = 0.1) => new()
    {
        Name = "policy comparison",
        Arms = [.. Enumerable.Range(0, arms).Select(i => new ArmDefinition { Name = $"arm{i}", Policy = PolicyNames.All[i % PolicyNames.All.Count] })],
        PrimaryMetric = metric,
        MinimumDetectableEffect = mde,
        Salt = "exp-7f3a",
    };

    /// <summary><paramref name="count"/> finished annotators of one arm, each with <paramref name="answered"/> test answers.</summary>
    public static IEnumerable<AnnotatorOutcome> Tested(int arm, int answered, IEnumerable<int> errors, string prefix) =>
        errors.Select((e, i) => new AnnotatorOutcome(arm, $"{prefix}{i}", Start, true, false, answered, e, 10, null, 0.1));

    /// <summary>Finished annotators of one arm, the first <paramref name="released"/> of <paramref name="finished"/> released.</summary>
    public static IEnumerable<AnnotatorOutcome> Finished(int arm, int finished, int released, string prefix) =>
        Enumerable.Range(0, finished).Select(i => new AnnotatorOutcome(
            arm, $"{prefix}{i}", Start, true, i < released, 0, 0, 12, i < released ? TimeSpan.FromMinutes(10) : null, 0.1));

    public static IEnumerable<AnnotatorOutcome> Started(int arm, int count, string prefix) =>
        Enumerable.Range(0, count).Select(i => new AnnotatorOutcome(arm, $"{prefix}{i}", Start, false, false, 0, 0, 3, null, 0.3));

    public static readonly DateTimeOffset Start = new(2025, 3, 4, 9, 30, 0, TimeSpan.Zero);
}
