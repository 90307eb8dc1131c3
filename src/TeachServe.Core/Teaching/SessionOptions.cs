using TeachServe.Core.Projects;

namespace TeachServe.Core.Teaching;

public enum SessionPhase
{
    Teaching,
    Testing,
    Released,
    Failed,
}

/// <summary>How one session is taught and judged; experiments override parts of it per arm.</summary>
public sealed record SessionOptions
{
    public string Policy { get; init; } = PolicyNames.Adaptive;
    /// <summary>Weight of the stochastic-greedy gain in the adaptive rule (DESIGN 2.4).</summary>
    public double BlendWeight { get; init; } = 2.0;
    public GateSettings Gate { get; init; } = new();
    /// <summary>The learner's alpha the teacher assumes; null = the model version's.</summary>
    public double? Alpha { get; init; }
    /// <summary>The lapse rate the teacher assumes; null = the model version's.</summary>
    public double? Lapse { get; init; }
    /// <summary>Seeds the random policy and the test-item order; the server derives it from the session id.</summary>
    public ulong Seed { get; init; }

    /// <summary>
    /// Exposure control (Sympson &amp; Hetter 1985, see <see cref="ExposureControl"/>): per test item (index = item −
    /// <see cref="Model.ModelVersion.TeachCount"/>), the probability K that the item is given when the test draws it;
    /// otherwise the session passes it over. Fixed when the session starts and stored with it, so a replay passes the
    /// same values. Null (or every K = 1) draws exactly as without exposure control.
    /// </summary>
    public IReadOnlyList<double>? TestAdministration { get; init; }

    /// <summary>
    /// The belief to start from, one weight per hypothesis (normalised when the session starts); null starts from the
    /// prior. A refresher of a released annotator starts from what their live record says they hold now
    /// (<see cref="LiveQuality.LiveBelief"/>); stored with the session so a replay starts from the same weights.
    /// </summary>
    public IReadOnlyList<double>? StartWeights { get; init; }

    /// <summary>Share of the best gain an opening item (<see cref="GateSettings.OpeningVariety"/>) may fall short by (0.1: at least 90 % of the best).</summary>
    public double OpeningTolerance { get; init; } = 0.1;

    public static SessionOptions FromProject(ProjectSettings settings, ulong seed) => new()
    {
        Policy = settings.Policy,
        BlendWeight = settings.BlendWeight,
        Gate = settings.Gate,
        Seed = seed,
    };
}
