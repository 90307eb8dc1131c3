using System.Diagnostics;
using System.Globalization;
using TeachServe.Core;
using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Benchmarks;

/// <summary>
/// <c>--breakdown [case] [rounds]</c>: the per-answer step and its parts timed in one process, interleaved. Each
/// round times a batch of every part, in an order that rotates from round to round, and divides each by the floor
/// batch of the same round; the medians over rounds are printed. On a shared machine the load changes within
/// seconds, so ratios from parts timed seconds or minutes apart (as BenchmarkDotNet times one method after the
/// other, each in its own process) can move by tens of percent; ratios within a round see the same load.
/// </summary>
public static class StepBreakdown
{
    public static void Run(string benchCase, int rounds, TextWriter output)
    {
        var step = new TeachingStepBenchmarks { Case = benchCase };
        step.Setup();
        var model = SyntheticModels.Build(benchCase);
        var state = new SessionState(model);
        var work = state.Belief.Clone();
        var policy = new TeachingPolicy(model, PolicyNames.Adaptive, SessionState.Blend);
        var random = new SeededRandom(11);
        var item = policy.ChooseNext(state.Belief, state.Shown, SessionState.WarmSteps, random);
        var label = model.TrueLabel(item);

        // Each part returns something so the JIT cannot drop it; parts after the copy start from the same state.
        var parts = new (string Name, Func<double> Action)[]
        {
            ("floor", step.Floor),
            ("per-answer", () => step.PerAnswer()),
            ("copy", () => { work.CopyFrom(state.Belief); return 0; }),
            ("choose", () => policy.ChooseNext(state.Belief, state.Shown, SessionState.WarmSteps, random)),
            ("copy+observe", () => { work.CopyFrom(state.Belief); work.Observe(item, label); return 0; }),
            ("copy+move", () => { work.CopyFrom(state.Belief); work.Move(item); return 0; }),
            ("copy+teach", () => { work.CopyFrom(state.Belief); work.Teach(item, label); return 0; }),
        };

        // A batch lasts about 20 ms, so one scheduler tick of another process cannot dominate it.
        var batch = new int[parts.Length];
        for (var p = 0; p < parts.Length; p++)
        {
            var start = Stopwatch.GetTimestamp();
            var calls = 0;
            while (Stopwatch.GetElapsedTime(start).TotalMilliseconds < 20 || calls < 3)
            {
                parts[p].Action();
                calls++;
            }

            batch[p] = calls;
        }

        var perCall = new double[parts.Length][];
        for (var p = 0; p < parts.Length; p++)
        {
            perCall[p] = new double[rounds];
        }

        for (var r = 0; r < rounds; r++)
        {
            for (var i = 0; i < parts.Length; i++)
            {
                var p = (i + r) % parts.Length;
                var action = parts[p].Action;
                var start = Stopwatch.GetTimestamp();
                for (var c = 0; c < batch[p]; c++)
                {
                    action();
                }

                perCall[p][r] = Stopwatch.GetElapsedTime(start).TotalMicroseconds / batch[p];
            }
        }

        var before = GC.GetAllocatedBytesForCurrentThread();
        for (var c = 0; c < 100; c++)
        {
            step.PerAnswer();
        }

        var allocated = (GC.GetAllocatedBytesForCurrentThread() - before) / 100.0;
        output.WriteLine(string.Create(CultureInfo.InvariantCulture, $"{benchCase}: {rounds} interleaved rounds; median per call, median of per-round ratios to the floor; per-answer allocates {allocated:0.#} bytes per call"));
        for (var p = 0; p < parts.Length; p++)
        {
            var ratios = new double[rounds];
            for (var r = 0; r < rounds; r++)
            {
                ratios[r] = perCall[p][r] / perCall[0][r];
            }

            output.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"  {parts[p].Name,-13} {Median(perCall[p]),10:0.0} µs  ratio {Median(ratios):0.000} (quartiles {Quantile(ratios, 0.25):0.000}–{Quantile(ratios, 0.75):0.000})"));
        }
    }

    private static double Median(double[] values) => Quantile(values, 0.5);

    private static double Quantile(double[] values, double q)
    {
        var sorted = values.Order().ToArray();
        var position = q * (sorted.Length - 1);
        var low = (int)Math.Floor(position);
        var high = (int)Math.Ceiling(position);
        return sorted[low] + ((position - low) * (sorted[high] - sorted[low]));
    }
}
