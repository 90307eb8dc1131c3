using ScottPlot;
using TeachServe.Core.Simulation;

namespace TeachServe.Plots;

/// <summary>
/// Simulation results as learning curves: mean true error of the held rule by teaching step with its 95 % band, one
/// line per policy × learner kind. The same picture for <c>teachserve simulate --compare</c> and the simulations API.
/// </summary>
public static class SimulationCurves
{
    public static Plot Draw(IReadOnlyList<SimulationResult> results, string project, double targetError)
    {
        ArgumentNullException.ThrowIfNull(results);
        var policies = results.Select(r => r.Policy).Distinct().ToArray();
        var kinds = results.Select(r => r.Variant).Distinct().ToArray();
        bool policiesDiffer = policies.Length > 1, kindsDiffer = kinds.Length > 1;
        var series = results.Select(r => new CurveSeries(
            Label(r, policiesDiffer, kindsDiffer),
            SeriesStyles.ForSimulation(r.Policy, r.Variant, policiesDiffer, kindsDiffer),
            r.Curve.Select(p => (double)p.Step).ToArray(),
            r.Curve.Select(p => p.MeanTrueError).ToArray(),
            r.Curve.Select(p => p.Low).ToArray(),
            r.Curve.Select(p => p.High).ToArray())).ToList();
        return LearningCurves.Draw(Title(results, project, policies, kinds), "mean true error of the held rule", series, targetError);
    }

    private static string Label(SimulationResult r, bool policiesDiffer, bool kindsDiffer) => (policiesDiffer, kindsDiffer) switch
    {
        (true, true) => $"{r.Policy} · {LearnerKinds.Name(r.Variant)}",
        (false, true) => LearnerKinds.Name(r.Variant),
        _ => r.Policy,
    };

    /// <summary>What every line shares goes in the title: the policy or kind when there is one, and the learners per line.</summary>
    private static string Title(IReadOnlyList<SimulationResult> results, string project, string[] policies, LearnerVariant[] kinds)
    {
        var shared = new List<string>();
        if (policies.Length == 1) shared.Add(policies[0]);
        if (kinds.Length == 1) shared.Add($"{LearnerKinds.Name(kinds[0])} learners");
        var learners = results.Select(r => r.Learners).Distinct().ToArray();
        if (learners.Length == 1) shared.Add($"n = {learners[0]}{(results.Count > 1 ? " per line" : "")}");
        var head = project.Length == 0 ? "Simulated learners" : $"{project}: simulated learners";
        return shared.Count == 0 ? head : $"{head} ({string.Join(", ", shared)})";
    }
}
