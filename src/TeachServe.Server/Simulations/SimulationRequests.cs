using TeachServe.Core.Simulation;
using TeachServe.Core.Projects;

namespace TeachServe.Server.Simulations;

/// <summary>Checks a simulation request against the limits; names of variants are kebab-case as in the CLI.</summary>
public static class SimulationRequests
{
    public static string VariantName(LearnerVariant v) => LearnerKinds.Name(v);

    public static IReadOnlyList<LearnerVariant> Variants(CreateSimulationRequest request) =>
        request.Variants is null
            ? [LearnerVariant.Assumed]
            : request.Variants.Select(v => Enum.GetValues<LearnerVariant>().First(e => VariantName(e) == v)).ToList();

    /// <summary>Every problem with the request, for a person to read; empty when it may run.</summary>
    public static List<string> Problems(CreateSimulationRequest r, SimulationLimits limits)
    {
        var problems = new List<string>();
        if (r.Policies is null || r.Policies.Count == 0) problems.Add("'policies' needs at least one policy.");
        else
        {
            foreach (var p in r.Policies.Where(p => !PolicyNames.All.Contains(p)))
                problems.Add($"'{Clip(p)}' is not a policy; expected one of {string.Join(", ", PolicyNames.All)}.");
            if (r.Policies.Distinct().Count() != r.Policies.Count) problems.Add("'policies' lists a policy twice.");
        }
        var known = Enum.GetValues<LearnerVariant>().Select(VariantName).ToList();
        if (r.Variants is { Count: 0 }) problems.Add("'variants' must not be empty (leave it out for 'assumed').");
        foreach (var v in r.Variants?.Where(v => !known.Contains(v)) ?? [])
            problems.Add($"'{Clip(v)}' is not a learner variant; expected one of {string.Join(", ", known)}.");
        if (r.Variants is { } vs && vs.Distinct().Count() != vs.Count) problems.Add("'variants' lists a variant twice.");
        if (r.Learners < 1 || r.Learners > limits.MaxLearners) problems.Add($"'learners' must be 1 to {limits.MaxLearners}.");
        if (r.ModelVersion is < 1) problems.Add("'modelVersion' must be 1 or more.");
        if (problems.Count == 0)
        {
            var runs = (long)r.Learners * r.Policies!.Count * (r.Variants?.Count ?? 1);
            if (runs > limits.MaxLearnerRuns)
                problems.Add($"learners × policies × variants = {runs} exceeds the limit of {limits.MaxLearnerRuns}.");
        }
        return problems;
    }

    private static string Clip(string? s) => s is null ? "null" : s.Length <= 40 ? s : s[..40] + "…";
}
