using TeachServe.Core.Model;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// The limit of the candidate-rule CUSUMs (<see cref="LiveMonitorSettings.CandidateLimit"/>) for an in-control ARL.
/// In control, the annotator answers the known label with probability 1 − p0 and each other label with p0/(K−1), and
/// live checks are drawn uniformly from the model's items; then candidate g's chart steps up with probability
/// err(g)·p0/(K−1), down with err(g)·(1 − p0), and stays otherwise, a lattice chart whose ARL is exact
/// (<see cref="BernoulliCusum.AverageRunLengths(int, int, int, double, double)"/>). The charts of several candidates are
/// combined by adding their alarm rates, 1/ARL ≈ Σ_g 1/ARL_g: exact for independent charts with geometric run lengths,
/// and conservative (too short) when they are positively dependent, as charts of similar rules are.
/// </summary>
public static class CandidateChartDesign
{
    /// <summary>The approximate in-control ARL of the candidate charts together at limit <paramref name="limit"/>.</summary>
    public static double InControlRunLength(ModelVersion model, IReadOnlyList<int> candidates, double p0, int limit)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(candidates);
        if (!(p0 > 0 && p0 < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(p0), p0, "Must lie in (0, 1).");
        }

        var rate = 0.0;
        foreach (var g in candidates)
        {
            var diagnostic = model.Error[g];
            if (diagnostic <= 0)
            {
                continue;
            }

            var arl = BernoulliCusum.AverageRunLengths(1, 1, limit, diagnostic * p0 / (model.LabelCount - 1), diagnostic * (1 - p0))[0];
            rate += 1 / arl;
        }

        return rate > 0 ? 1 / rate : double.PositiveInfinity;
    }

    /// <summary>The smallest limit whose approximate in-control ARL reaches <paramref name="inControlRunLength"/>.</summary>
    public static int Limit(ModelVersion model, IReadOnlyList<int> candidates, double p0, double inControlRunLength, int maxLimit = 60)
    {
        for (var limit = 1; limit <= maxLimit; limit++)
        {
            if (InControlRunLength(model, candidates, p0, limit) >= inControlRunLength)
            {
                return limit;
            }
        }

        throw new ArgumentOutOfRangeException(nameof(inControlRunLength), inControlRunLength, $"No limit up to {maxLimit} reaches it.");
    }
}
