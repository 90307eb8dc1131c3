using TeachServe.Core;
using TeachServe.Core.Simulation;

namespace TeachServe.Plots.Tests;

/// <summary>Seeded made-up results with the shape of real ones: a falling mean error with a band around it.</summary>
public static class Samples
{
    public static SimulationResult Simulation(string policy, LearnerVariant kind, ulong seed, int learners = 120)
    {
        var random = new SeededRandom(seed);
        var steps = 8 + random.NextInt(30);
        double start = 0.3 + (0.4 * random.NextDouble()), floor = 0.1 * random.NextDouble(), rate = 0.1 + (0.5 * random.NextDouble());
        var curve = new List<CurvePoint>();
        for (var s = 0; s < steps; s++)
        {
            var mean = floor + ((start - floor) * Math.Exp(-rate * s));
            var half = 0.02 + (0.1 * random.NextDouble() / (s + 1));
            curve.Add(new CurvePoint(s, mean, Math.Max(0, mean - half), Math.Min(1, mean + half)));
        }
        return new SimulationResult
        {
            Policy = policy, Variant = kind, Learners = learners, Released = learners / 2, ReleasePrecision = 0.9,
            Unqualified = 3, UnqualifiedReleased = 1, MeanTeachingItems = steps, MeanTestItems = 10,
            MeanTeachingItemsToRelease = steps, MeanFinalTrueError = floor, Curve = curve,
        };
    }
}
