using TeachServe.Core.Model;

namespace TeachServe.Core.Simulation;

/// <summary>
/// Draws one simulated annotator of a learner kind (DESIGN 1, "learner kind"): the assumed switching learner and its
/// in-family variants (<see cref="SimulatedLearner"/>), or a learner unlike the model, whose parameters are drawn
/// per annotator so that a run simulates a population:
/// <list type="bullet">
/// <item>exemplar and prototype: attention weights ~ Dirichlet(1, …, 1) over the feature columns, sensitivity
/// c ~ LogNormal(ln 8, 0.4), response scaling γ ~ LogNormal(ln 4, 0.3) (ranges of the kind fitted in category-learning
/// studies, from memory);</item>
/// <item>partial attention: the prototype learner with attention on a random non-empty proper subset of the columns;</item>
/// <item>oblique rules: 300 rules of its own, half random hyperplanes with random offsets, half noisy nearest-class-mean
/// discriminants at three noise scales, learning strength alpha × LogNormal(0, 0.3);</item>
/// <item>decision lists: see <see cref="DecisionListLearner"/>, same learning strength draw.</item>
/// </list>
/// </summary>
public static class LearnerKinds
{
    /// <summary>Rules in an oblique-rule learner's own family.</summary>
    public const int ObliqueRuleCount = 300;

    /// <summary>The kind's name in the CLI, the API and plots: kebab-case (<c>biased-prior</c>, <c>oblique-rules</c>).</summary>
    public static string Name(LearnerVariant kind) => System.Text.Json.JsonNamingPolicy.KebabCaseLower.ConvertName(kind.ToString());

    /// <summary>Whether the kind answers from item features, so a simulation needs them.</summary>
    public static bool NeedsFeatures(LearnerVariant kind) => kind >= LearnerVariant.Exemplar;

    public static ISimulatedAnnotator Create(ModelVersion model, LearnerVariant kind, ItemFeatures? features, double alpha, double lapse, double targetError, SeededRandom random)
    {
        ArgumentNullException.ThrowIfNull(model);
        if (!NeedsFeatures(kind))
        {
            return new SimulatedLearner(model, kind, alpha, lapse, targetError, random);
        }

        if (features is null)
        {
            throw new ArgumentException($"The learner kind {kind} answers from item features; the simulation has none.", nameof(features));
        }

        var d = features.Dimensions;
        switch (kind)
        {
            case LearnerVariant.Exemplar:
            case LearnerVariant.Prototype:
                return new SimilarityLearner(model, features, kind == LearnerVariant.Prototype, Dirichlet(d, random), LogNormal(Math.Log(8), 0.4, random), LogNormal(Math.Log(4), 0.3, random), lapse, random);
            case LearnerVariant.PartialAttention:
            {
                var attention = Dirichlet(d, random);
                if (d > 1)
                {
                    var kept = 1 + random.NextInt(d - 1);
                    var order = Enumerable.Range(0, d).ToArray();
                    random.Shuffle(order.AsSpan());
                    foreach (var j in order.Skip(kept))
                    {
                        attention[j] = 0;
                    }
                }

                return new SimilarityLearner(model, features, prototype: true, attention, LogNormal(Math.Log(8), 0.4, random), LogNormal(Math.Log(4), 0.3, random), lapse, random);
            }

            case LearnerVariant.ObliqueRules:
                return new RuleSwitchingLearner(model, ObliqueRules(model, features, random), alpha * LogNormal(0, 0.3, random), lapse, random);
            case LearnerVariant.DecisionLists:
                return new DecisionListLearner(model, features, alpha * LogNormal(0, 0.3, random), lapse, random);
            default:
                throw new ArgumentOutOfRangeException(nameof(kind), kind, "Unknown learner kind.");
        }
    }

    /// <summary>An oblique-rule family: random hyperplanes and noisy nearest-class-mean discriminants (labels per item).</summary>
    public static byte[][] ObliqueRules(ModelVersion model, ItemFeatures features, SeededRandom random)
    {
        int k = model.LabelCount, d = features.Dimensions, n = model.ItemCount;
        var means = new double[k][];
        for (var c = 0; c < k; c++)
        {
            var members = Enumerable.Range(0, n).Where(i => model.TrueLabel(i) == c).ToArray();
            means[c] = [.. Enumerable.Range(0, d).Select(j => members.Length == 0 ? 0 : members.Average(i => features.Of(i)[j]))];
        }

        var rules = new byte[ObliqueRuleCount][];
        double[] scales = [0.3, 0.7, 1.5];
        for (var r = 0; r < rules.Length; r++)
        {
            var weights = new double[k][];
            var offsets = new double[k];
            var random_ = r < rules.Length / 2;
            for (var c = 0; c < k; c++)
            {
                var scale = scales[r % scales.Length];
                weights[c] = [.. Enumerable.Range(0, d).Select(j => random_ ? random.NextGaussian() : means[c][j] + (scale * random.NextGaussian()))];
                offsets[c] = random_ ? random.NextGaussian() : (-0.5 * means[c].Sum(v => v * v)) + (scale * random.NextGaussian());
            }

            if (random_ && k == 2)
            {
                // A random hyperplane with its own offset: a random quantile of the items' projections.
                var projections = Enumerable.Range(0, n).Select(i => Dot(weights[1], features.Of(i)) - Dot(weights[0], features.Of(i))).Order().ToArray();
                offsets[1] = -projections[(int)((0.1 + (0.8 * random.NextDouble())) * (n - 1))];
                offsets[0] = 0;
            }

            var labels = new byte[n];
            for (var i = 0; i < n; i++)
            {
                var best = 0;
                var bestScore = double.NegativeInfinity;
                for (var c = 0; c < k; c++)
                {
                    var score = Dot(weights[c], features.Of(i)) + offsets[c];
                    if (score > bestScore)
                    {
                        bestScore = score;
                        best = c;
                    }
                }

                labels[i] = (byte)best;
            }

            rules[r] = labels;
        }

        return rules;
    }

    private static double Dot(double[] w, ReadOnlySpan<double> x)
    {
        var s = 0.0;
        for (var j = 0; j < w.Length; j++)
        {
            s += w[j] * x[j];
        }

        return s;
    }

    /// <summary>A draw from the flat Dirichlet: normalised standard exponentials (common practice).</summary>
    private static double[] Dirichlet(int d, SeededRandom random)
    {
        var g = new double[d];
        for (var j = 0; j < d; j++)
        {
            g[j] = -Math.Log(1 - random.NextDouble());
        }

        var total = g.Sum();
        for (var j = 0; j < d; j++)
        {
            g[j] /= total;
        }

        return g;
    }

    private static double LogNormal(double mu, double sigma, SeededRandom random) => Math.Exp(mu + (sigma * random.NextGaussian()));
}
