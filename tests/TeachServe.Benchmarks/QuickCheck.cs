using System.Diagnostics;
using System.Globalization;
using TeachServe.Core.Hypotheses;
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

    /// <summary>
    /// <c>--profile [case] [reference]</c>: compiles a synthetic project (<see cref="SyntheticProjects"/>) and prints
    /// the wall time of every step, the hypothesis count and the peak memory; <c>reference</c> uses the linear
    /// family as it was before the compile-speed work.
    /// </summary>
    public static void Profile(string projectCase, bool reference, TextWriter output)
    {
        var project = SyntheticProjects.Of(projectCase);
        var reporter = new CompileProgressReporter(null);
        var stopwatch = Stopwatch.StartNew();
        var model = reference
            ? ModelCompiler.Compile(project, reporter, (input, pool, _) => ReferenceLinearFamily.Generate(input, pool), CancellationToken.None)
            : ModelCompiler.Compile(project, reporter, LinearFamily.Generate, CancellationToken.None);
        var total = stopwatch.Elapsed;
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"{projectCase}{(reference ? " (reference)" : string.Empty)}: {total.TotalSeconds:0.00} s, {model.HypothesisCount} hypotheses ({model.Summary.HypothesesGenerated} generated), best non-truth error {FittedError(model):0.000}, prior mass within {model.Summary.NearTargetErrorLimit:0.00}: {model.Summary.PriorMassNearTarget:0.000}"));
        foreach (var (step, elapsed) in reporter.Timings)
        {
            output.WriteLine(string.Create(CultureInfo.InvariantCulture, $"  {step,-24} {elapsed.TotalSeconds,8:0.000} s"));
        }

        using var process = Process.GetCurrentProcess();
        output.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"  peak working set {process.PeakWorkingSet64 / (1024.0 * 1024 * 1024):0.00} GiB"));
    }

    /// <summary>Error of the best hypothesis other than the truth labelling (the fitted rule, usually).</summary>
    private static double FittedError(ModelVersion model)
    {
        var best = double.PositiveInfinity;
        for (var h = 0; h < model.HypothesisCount; h++)
        {
            if (h != model.TargetIndex)
            {
                best = Math.Min(best, model.Error[h]);
            }
        }

        return best;
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
