using ScottPlot;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;

namespace TeachServe.Plots;

/// <summary>
/// How one series looks: an Okabe–Ito colour, and a marker shape as the second cue (for readers who still confuse two
/// colours, and for grey-scale print).
/// </summary>
public readonly record struct SeriesStyle(Color Color, MarkerShape Marker);

/// <summary>
/// The fixed look of every teaching policy and learner kind, the same in every plot of the CLI, the API and the
/// console, so that a reader who has learnt "adaptive is blue" never has to learn it again.
/// </summary>
public static class SeriesStyles
{
    /// <summary>Data tied to no policy or learner kind (one calibration series, a histogram of all annotators).</summary>
    public static readonly SeriesStyle Neutral = new(OkabeIto.Black, MarkerShape.FilledCircle);

    /// <summary>Reference lines (target error, the diagonal): annotations, not data, so a grey outside the palette.</summary>
    public static readonly Color Reference = Color.FromHex("#767676");

    private static readonly Dictionary<string, SeriesStyle> Policies = new(StringComparer.Ordinal)
    {
        [PolicyNames.Adaptive] = new(OkabeIto.Blue, MarkerShape.FilledCircle),
        [PolicyNames.StochasticGreedy] = new(OkabeIto.Vermillion, MarkerShape.FilledSquare),
        [PolicyNames.Cover] = new(OkabeIto.BluishGreen, MarkerShape.FilledTriangleUp),
        [PolicyNames.EasyFirst] = new(OkabeIto.ReddishPurple, MarkerShape.FilledDiamond),
        [PolicyNames.Random] = new(OkabeIto.Orange, MarkerShape.FilledTriangleDown),
    };

    // Every kind has its own marker, so that a plot of policies × kinds (colour = policy, marker = kind) never draws
    // two series alike; kinds unlike the model have open markers.
    private static readonly Dictionary<LearnerVariant, SeriesStyle> Kinds = new()
    {
        [LearnerVariant.Assumed] = new(OkabeIto.Black, MarkerShape.FilledCircle),
        [LearnerVariant.Fast] = new(OkabeIto.Blue, MarkerShape.FilledSquare),
        [LearnerVariant.Slow] = new(OkabeIto.SkyBlue, MarkerShape.FilledTriangleUp),
        [LearnerVariant.BiasedPrior] = new(OkabeIto.Vermillion, MarkerShape.FilledDiamond),
        [LearnerVariant.Forgetful] = new(OkabeIto.ReddishPurple, MarkerShape.FilledTriangleDown),
        [LearnerVariant.Eliminating] = new(OkabeIto.BluishGreen, MarkerShape.Eks),
        [LearnerVariant.Stuck] = new(OkabeIto.Orange, MarkerShape.Cross),
        [LearnerVariant.RandomAnswers] = new(OkabeIto.Black, MarkerShape.Asterisk),
        [LearnerVariant.Exemplar] = new(OkabeIto.Blue, MarkerShape.OpenCircle),
        [LearnerVariant.Prototype] = new(OkabeIto.BluishGreen, MarkerShape.OpenSquare),
        [LearnerVariant.ObliqueRules] = new(OkabeIto.Vermillion, MarkerShape.OpenTriangleUp),
        [LearnerVariant.DecisionLists] = new(OkabeIto.ReddishPurple, MarkerShape.OpenDiamond),
        [LearnerVariant.PartialAttention] = new(OkabeIto.Orange, MarkerShape.OpenTriangleDown),
    };

    /// <summary>Markers for names without a fixed style and for the second arm of a repeated policy.</summary>
    private static readonly MarkerShape[] SpareMarkers =
    [
        MarkerShape.OpenCircle, MarkerShape.OpenSquare, MarkerShape.OpenTriangleUp, MarkerShape.OpenDiamond,
        MarkerShape.OpenTriangleDown, MarkerShape.Eks, MarkerShape.Cross, MarkerShape.Asterisk,
    ];

    /// <summary>The policy's fixed style; a name without one gets a colour the policies do not use, chosen by a hash of the name.</summary>
    public static SeriesStyle ForPolicy(string policy)
    {
        ArgumentNullException.ThrowIfNull(policy);
        if (Policies.TryGetValue(policy, out var style)) return style;
        var spare = OkabeIto.All.Where(c => Policies.Values.All(p => p.Color != c)).ToArray();
        var hash = Fnv1a(policy);
        return new(spare[(int)(hash % (uint)spare.Length)], SpareMarkers[(int)(hash / (uint)spare.Length % (uint)SpareMarkers.Length)]);
    }

    public static SeriesStyle ForLearnerKind(LearnerVariant kind) =>
        Kinds.TryGetValue(kind, out var style) ? style : new(OkabeIto.SkyBlue, SpareMarkers[(int)kind % SpareMarkers.Length]);

    /// <summary>
    /// One series of a simulation: the policy's style when only policies differ, the kind's when only kinds differ,
    /// and when both do the policy's colour with the kind's marker.
    /// </summary>
    public static SeriesStyle ForSimulation(string policy, LearnerVariant kind, bool policiesDiffer, bool kindsDiffer) =>
        (policiesDiffer, kindsDiffer) switch
        {
            (false, true) => ForLearnerKind(kind),
            (true, true) => ForPolicy(policy) with { Marker = ForLearnerKind(kind).Marker },
            _ => ForPolicy(policy),
        };

    /// <summary>
    /// Experiment arms in arm order: each arm has its policy's style; an arm whose policy an earlier arm already has
    /// keeps the colour and takes the next spare marker, so the colour still says which policy it is.
    /// </summary>
    public static IReadOnlyList<SeriesStyle> ForArms(IReadOnlyList<string> armPolicies)
    {
        ArgumentNullException.ThrowIfNull(armPolicies);
        var styles = new SeriesStyle[armPolicies.Count];
        var seen = new Dictionary<string, int>(StringComparer.Ordinal);
        for (var i = 0; i < styles.Length; i++)
        {
            var repeat = seen.TryGetValue(armPolicies[i], out var n) ? n : 0;
            seen[armPolicies[i]] = repeat + 1;
            var style = ForPolicy(armPolicies[i]);
            styles[i] = repeat == 0 ? style : style with { Marker = SpareMarkers.Where(m => m != style.Marker).ElementAt((repeat - 1) % (SpareMarkers.Length - 1)) };
        }
        return styles;
    }

    /// <summary>FNV-1a (Fowler, Noll &amp; Vo): unlike <see cref="string.GetHashCode()"/> it is the same in every process.</summary>
    private static uint Fnv1a(string text)
    {
        var hash = 2166136261u;
        foreach (var c in text)
        {
            hash = (hash ^ c) * 16777619u;
        }
        return hash;
    }
}
