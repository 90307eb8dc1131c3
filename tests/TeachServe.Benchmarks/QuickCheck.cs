using System.Diagnostics;
using System.Globalization;

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
        var reference = new ReferenceStepBenchmarks { Case = benchCase };
        reference.Setup();
        Time(output, "reference", () => reference.Reference(), repeats: 2);
    }

    private static void Time(TextWriter output, string name, Func<object> action, int repeats = 20)
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
