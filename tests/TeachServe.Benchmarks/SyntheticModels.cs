using TeachServe.Core;
using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;

namespace TeachServe.Benchmarks;

/// <summary>The benchmark sizes: hypotheses × teach items (test items are a fifth of the teach pool, at most 500).</summary>
public static class BenchCases
{
    public const string Small = "10k x 1k";
    public const string Large = "100k x 5k";

    public static (int Hypotheses, int Teach, int Test) Size(string name) => name switch
    {
        Small => (10_000, 1_000, 200),
        Large => (100_000, 5_000, 500),
        _ => throw new ArgumentException($"Unknown case '{name}'.", nameof(name)),
    };
}

/// <summary>
/// Seeded synthetic model versions: binary labels, each hypothesis mislabels every item independently with its own
/// rate drawn uniformly from [0, 0.5], prior weights uniform in [0.5, 1.5].
/// </summary>
public static class SyntheticModels
{
    public static readonly LearnerSettings Learner = new() { Alpha = 1.5, Lapse = 0.05 };

    public static (int[] Truth, string[] ItemIds, List<(byte[] Predictions, double Weight)> Hypotheses) Predictions(string benchCase, ulong seed = 2024)
    {
        var (m, teach, test) = BenchCases.Size(benchCase);
        var n = teach + test;
        var random = new SeededRandom(seed);
        var truth = new int[n];
        for (var i = 0; i < n; i++)
        {
            truth[i] = random.NextInt(2);
        }

        var hypotheses = new List<(byte[], double)>(m);
        for (var h = 0; h < m; h++)
        {
            // Mistake when a 53-bit uniform draw falls below rate · 2^53.
            var threshold = (ulong)(random.NextDouble() * 0.5 * (1UL << 53));
            var p = new byte[n];
            for (var i = 0; i < n; i++)
            {
                var wrong = (random.NextUInt64() >> 11) < threshold;
                p[i] = (byte)(wrong ? 1 - truth[i] : truth[i]);
            }

            hypotheses.Add((p, 0.5 + random.NextDouble()));
        }

        var ids = Enumerable.Range(0, n).Select(i => $"i{i}").ToArray();
        return (truth, ids, hypotheses);
    }

    public static ModelVersion Build(string benchCase, ulong seed = 2024)
    {
        var (truth, ids, hypotheses) = Predictions(benchCase, seed);
        return Compile(truth, ids, BenchCases.Size(benchCase).Teach, hypotheses);
    }

    public static ModelVersion Compile(int[] truth, string[] ids, int teach, List<(byte[] Predictions, double Weight)> hypotheses) =>
        ModelCompiler.FromPredictions(["negative", "positive"], ids, teach, truth, hypotheses, Learner);
}

/// <summary>
/// A realistic mid-session state: a simulated annotator (the assumed learner, seeded) taught ten items by the
/// adaptive policy with blend 1, the way a live session would be.
/// </summary>
public sealed class SessionState
{
    public const int WarmSteps = 10;
    public const double Blend = 1.0;

    public SessionState(ModelVersion model, ulong seed = 7)
    {
        Model = model;
        Belief = new Belief(model, model.Q, model.Learner.Lapse);
        Shown = new bool[model.TeachCount];
        var policy = new TeachingPolicy(model, PolicyNames.Adaptive, Blend);
        var random = new SeededRandom(seed);
        var learner = new SimulatedLearner(model, LearnerVariant.Assumed, model.Learner.Alpha, model.Learner.Lapse, 0.1, new SeededRandom(SeededRandom.Derive(seed, 1)));
        for (var step = 0; step < WarmSteps; step++)
        {
            var item = policy.ChooseNext(Belief, Shown, step, random);
            Belief.Teach(item, learner.Answer(item));
            learner.SeeFeedback(item);
            Shown[item] = true;
        }
    }

    public ModelVersion Model { get; }
    public Belief Belief { get; }
    public bool[] Shown { get; }
    public static int Taught => WarmSteps;
}
