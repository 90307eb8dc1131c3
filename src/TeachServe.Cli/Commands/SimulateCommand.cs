using System.Globalization;
using System.Text;
using System.Text.Json;
using TeachServe.Core.Csv;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;
using TeachServe.Plots;

namespace TeachServe.Cli.Commands;

/// <summary>
/// <c>teachserve simulate DIR</c>: runs simulated annotators through teaching, the held-out test and the gate,
/// for one policy or several side by side on the same simulated population.
/// </summary>
internal static class SimulateCommand
{
    public const string Usage =
        "teachserve simulate DIR [--policy P | --compare P1,P2,...] [--learners N] [--seed S] " +
        "[--learner-variant V] [--blend W] [--json] [--out DIR]";

    public static int Run(string[] args, TextWriter output, TextWriter error)
    {
        var options = CliArguments.Parse(args, flags: ["--json"], values: ["--policy", "--compare", "--learners", "--seed", "--learner-variant", "--blend", "--out"]);
        if (options is null || options.Positional.Count != 1)
        {
            error.WriteLine($"usage: {Usage}");
            return 2;
        }

        if (!TryParse(options, error, out var learners, out var seed, out var variant, out var blend))
        {
            return 2;
        }

        var project = ProjectLoader.Load(options.Positional[0]);
        var policies = (options.Value("--compare") ?? options.Value("--policy") ?? project.Settings.Policy)
            .Split(',', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries);
        var unknown = policies.Where(p => !PolicyNames.All.Contains(p)).ToArray();
        if (unknown.Length > 0)
        {
            error.WriteLine($"unknown policy: {string.Join(", ", unknown)} (known: {string.Join(", ", PolicyNames.All)})");
            return 2;
        }

        var model = ModelCompiler.Compile(project);
        ItemFeatures? features = null;
        if (LearnerKinds.NeedsFeatures(variant))
        {
            try
            {
                features = ItemFeatures.From(model, project.Items);
            }
            catch (ArgumentException e)
            {
                error.WriteLine(e.Message);
                return 2;
            }
        }

        var json = options.Has("--json");
        var results = new List<SimulationResult>();
        foreach (var policy in policies)
        {
            var simulation = new SimulationOptions
            {
                Session = SessionOptions.FromProject(project.Settings, seed) with { Policy = policy, BlendWeight = blend ?? project.Settings.BlendWeight },
                Learners = learners,
                Seed = seed,
                Variant = variant,
                Cost = project.Settings.Cost,
                Features = features,
            };
            var progress = json ? null : new ProgressBar(error, policy);
            results.Add(Simulator.Run(model, simulation, progress));
            progress?.Finish();
        }

        var compare = options.Value("--compare") is not null;
        if (compare)
        {
            var outDir = options.Value("--out") ?? DefaultCompareFolder(options.Positional[0]);
            Directory.CreateDirectory(outDir);
            File.WriteAllText(Path.Combine(outDir, "compare.csv"), CurvesCsv(results));
            PlotOutput.SavePngAndSvg(SimulationCurves.Draw(results, project.Settings.Name, project.Settings.Gate.TargetError),
                Path.Combine(outDir, "compare"), PlotSize.Report);
            if (!json)
            {
                output.WriteLine($"wrote {Path.Combine(outDir, "compare.csv")}, compare.png, compare.svg");
            }
        }

        if (json)
        {
            output.WriteLine(compare
                ? JsonSerializer.Serialize(results.Select(ToJson), CliJson.Options)
                : JsonSerializer.Serialize(ToJson(results[0]), CliJson.Options));
            return 0;
        }

        WriteTable(output, project, model, results);
        return 0;
    }

    private static bool TryParse(CliArguments options, TextWriter error, out int learners, out ulong seed, out LearnerVariant variant, out double? blend)
    {
        learners = 200;
        seed = 1;
        variant = LearnerVariant.Assumed;
        blend = null;
        if (!options.TryLearners(error, ref learners))
        {
            return false;
        }

        if (!options.TrySeed(error, ref seed))
        {
            return false;
        }

        if (options.Value("--learner-variant") is { } v)
        {
            var match = Enum.GetValues<LearnerVariant>().Where(e => VariantName(e) == v).ToArray();
            if (match.Length == 0)
            {
                error.WriteLine($"unknown learner variant '{v}' (known: {string.Join(", ", Enum.GetValues<LearnerVariant>().Select(VariantName))})");
                return false;
            }

            variant = match[0];
        }

        if (options.Value("--blend") is { } b)
        {
            if (!double.TryParse(b, NumberStyles.Float, CultureInfo.InvariantCulture, out var w) || !(w >= 0) || !double.IsFinite(w))
            {
                error.WriteLine("--blend must be a non-negative number");
                return false;
            }

            blend = w;
        }

        return true;
    }

    public static string VariantName(LearnerVariant v) => LearnerKinds.Name(v);

    private static object ToJson(SimulationResult r) => new
    {
        policy = r.Policy,
        variant = VariantName(r.Variant),
        learners = r.Learners,
        released = r.Released,
        releaseRate = Finite(r.ReleaseRate),
        releasePrecision = Finite(r.ReleasePrecision),
        unqualified = r.Unqualified,
        unqualifiedReleased = r.UnqualifiedReleased,
        meanTeachingItems = Finite(r.MeanTeachingItems),
        meanTeachingItemsToRelease = Finite(r.MeanTeachingItemsToRelease),
        meanTestItems = Finite(r.MeanTestItems),
        meanFinalTrueError = Finite(r.MeanFinalTrueError),
        curve = r.Curve.Select(p => new { step = p.Step, meanTrueError = p.MeanTrueError, low = p.Low, high = p.High }),
    };

    /// <summary>JSON has no NaN: an undefined figure (e.g. precision with nobody released) is written as null.</summary>
    private static double? Finite(double value) => double.IsFinite(value) ? value : null;

    internal static string CurvesCsv(IReadOnlyList<SimulationResult> results)
    {
        var csv = CsvCells.AppendRow(new StringBuilder(), "policy", "variant", "step", "meanTrueError", "low", "high");
        foreach (var r in results)
        {
            foreach (var p in r.Curve)
            {
                CsvCells.AppendRow(csv, r.Policy, VariantName(r.Variant), p.Step.ToString(CultureInfo.InvariantCulture),
                    p.MeanTrueError.ToString("G6", CultureInfo.InvariantCulture), p.Low.ToString("G6", CultureInfo.InvariantCulture),
                    p.High.ToString("G6", CultureInfo.InvariantCulture));
            }
        }

        return csv.ToString();
    }

    /// <summary>Without <c>--out</c>, a folder of its own in the working directory, named after the project folder.</summary>
    internal static string DefaultCompareFolder(string projectDir) =>
        "compare-" + Path.GetFileName(Path.TrimEndingDirectorySeparator(Path.GetFullPath(projectDir)));

    private static void WriteTable(TextWriter output, ProjectDefinition project, ModelVersion model, List<SimulationResult> results)
    {
        var gate = project.Settings.Gate;
        output.WriteLine($"{project.Settings.Name}: {model.HypothesisCount} hypotheses, {model.TeachCount} teach / {model.TestCount} test items, target error {gate.TargetError}, learners {VariantName(results[0].Variant)} x{results[0].Learners}");
        output.WriteLine($"{"policy",-18} {"released",9} {"precision",9} {"teach",7} {"to rel.",7} {"test",6} {"err@5",7} {"err@10",7} {"err@20",7} {"final",7} {"bad rel.",9}");
        foreach (var r in results)
        {
            string At(int step) => r.Curve.Count == 0 ? "-" : r.Curve[Math.Min(step, r.Curve.Count - 1)].MeanTrueError.ToString("F3", CultureInfo.InvariantCulture);
            output.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{r.Policy,-18} {r.ReleaseRate,9:P1} {r.ReleasePrecision,9:F3} {r.MeanTeachingItems,7:F1} {r.MeanTeachingItemsToRelease,7:F1} {r.MeanTestItems,6:F1} {At(5),7} {At(10),7} {At(20),7} {r.MeanFinalTrueError,7:F3} {r.UnqualifiedReleased,4}/{r.Unqualified,-4}"));
        }

        output.WriteLine("precision: share of released learners whose true error ≤ target; bad rel.: released / learners above target + delta; err@k: mean true error after k teaching items");
    }

    private sealed class ProgressBar(TextWriter writer, string label) : IProgress<double>
    {
        private int _shown = -1;

        public void Report(double value)
        {
            var percent = (int)(value * 100);
            if (percent == _shown)
            {
                return;
            }

            _shown = percent;
            var filled = percent / 5;
            writer.Write($"\r{label,-18} [{new string('#', filled)}{new string('.', 20 - filled)}] {percent,3}%");
        }

        public void Finish() => writer.WriteLine();
    }
}
