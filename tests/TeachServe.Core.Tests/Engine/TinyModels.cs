using TeachServe.Core.Model;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Engine;

/// <summary>Small hand-made model versions for exact checks.</summary>
internal static class TinyModels
{
    /// <summary>
    /// Items x = 1..n on a line, thresholds θ = 1..n+1 with h_θ(x) = 1 iff x ≥ θ, target θ = <paramref name="target"/>,
    /// uniform prior; every item in the teach pool (REFERENCES.md A, threshold toy).
    /// </summary>
    public static ModelVersion Thresholds(int n, int target, double alpha, double lapse = 0.0, int testItems = 0)
    {
        var truth = Enumerable.Range(1, n + testItems).Select(x => x >= target ? 1 : 0).ToArray();
        var hypotheses = Enumerable.Range(1, n + 1)
            .Select(theta => (Enumerable.Range(1, n + testItems).Select(x => (byte)(x >= theta ? 1 : 0)).ToArray(), 1.0));
        return ModelCompiler.FromPredictions(
            ["negative", "positive"],
            Enumerable.Range(1, n + testItems).Select(x => $"x{x}").ToArray(),
            n,
            truth,
            hypotheses,
            new LearnerSettings { Alpha = alpha, Lapse = lapse });
    }

    /// <summary>A random instance: <paramref name="m"/> random hypotheses over n items, K labels, random prior weights.</summary>
    public static ModelVersion Random(int seed, int m, int teach, int test, int labels, double alpha, double lapse)
    {
        var random = new SeededRandom((ulong)seed);
        var n = teach + test;
        var truth = Enumerable.Range(0, n).Select(_ => random.NextInt(labels)).ToArray();
        var hypotheses = new List<(byte[], double)>();
        for (var h = 0; h < m; h++)
        {
            var wrongRate = random.NextDouble() * 0.6;
            var p = truth.Select(y => (byte)(random.NextDouble() < wrongRate ? (y + 1 + random.NextInt(labels - 1)) % labels : y)).ToArray();
            hypotheses.Add((p, 0.2 + random.NextDouble()));
        }

        return ModelCompiler.FromPredictions(
            Enumerable.Range(0, labels).Select(c => $"c{c}").ToArray(),
            Enumerable.Range(0, n).Select(i => $"i{i}").ToArray(),
            teach,
            truth,
            hypotheses,
            new LearnerSettings { Alpha = alpha, Lapse = lapse });
    }
}
