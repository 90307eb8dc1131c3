using System.Diagnostics;
using System.Globalization;
using TeachServe.Core.Model;

namespace TeachServe.Benchmarks;

/// <summary>
/// <c>--quick [case]</c>: a few Stopwatch-timed steps without BenchmarkDotNet, to check a change in seconds.
/// The numbers to publish come from the BenchmarkDotNet run.
/// </summary>
public static class QuickCheck
{
    public static void Run(string benchCase, TextWriter output)
    {
        var stopwatch = Stopwatch.StartNew();
        var step = new TeachingStepBenchmarks { Case = benchCase };
        step.Setup();
        output.WriteLine($"{benchCase}: setup {stopwatch.Elapsed.TotalSeconds:0.0} s");
        Time(output, "per-answer", () => step.PerAnswer());
        Time(output, "floor", () => step.Floor());
        Time(output, "row by row", () => step.FloorRowByRow());
        var reference = new ReferenceStepBenchmarks { Case = benchCase };
        reference.Setup();
        Time(output, "reference", () => reference.Reference(), repeats: 2);
    }

    /// <summary><c>--compile [case]</c>: wall time of each compile stage.</summary>
    public static void Compile(string benchCase, TextWriter output)
    {
        var stopwatch = Stopwatch.StartNew();
        var (truth, ids, hypotheses) = SyntheticModels.Predictions(benchCase);
        output.WriteLine($"{benchCase}: predictions {stopwatch.Elapsed.TotalSeconds:0.00} s");
        stopwatch.Restart();
        var model = SyntheticModels.Compile(truth, ids, BenchCases.Size(benchCase).Teach, hypotheses);
        output.WriteLine($"  compile {stopwatch.Elapsed.TotalSeconds:0.00} s (greedy {model.GreedySequence.Count}, cover {model.CoverSequence.Count})");
        stopwatch.Restart();
        TeachingOrders.StochasticGreedy(model, model.Q, Math.Min(model.TeachCount, ModelCompiler.PrecomputedGreedyLength));
        output.WriteLine($"  greedy {stopwatch.Elapsed.TotalSeconds:0.00} s");
        stopwatch.Restart();
        TeachingOrders.Cover(model, out _);
        output.WriteLine($"  cover {stopwatch.Elapsed.TotalSeconds:0.00} s");
        stopwatch.Restart();
        TeachingOrders.EasyFirst(model);
        output.WriteLine($"  easy-first {stopwatch.Elapsed.TotalSeconds:0.00} s");
    }

    private static void Time(TextWriter output, string name, Func<object> action, int repeats = 60)
    {
        action();
        var best = double.PositiveInfinity;
        for (var i = 0; i < repeats; i++)
        {
            var start = Stopwatch.GetTimestamp();
            action();
            best = Math.Min(best, Stopwatch.GetElapsedTime(start).TotalMilliseconds);
        }

        output.WriteLine(string.Create(CultureInfo.InvariantCulture, $"  {name,-12} best of {repeats}: {best:0.000} ms"));
    }
}
