using System.Globalization;
using System.Text;
using TeachServe.Core;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Statistics;
using TeachServe.Core.Teaching;

namespace TeachServe.Cli.Commands;

/// <summary>
/// <c>teachserve robustness</c>: projects × learner kinds × policies, N seeded learners per cell, as a Markdown table
/// with 95 % intervals. Cells run in parallel on every core; each cell's learners use the simulator's own seeds, so
/// the numbers do not depend on scheduling.
/// </summary>
internal static class RobustnessCommand
{
    public const string Usage = "teachserve robustness DIR [DIR ...] [--learners N] [--seed S] [--policies a,b] [--kinds a,b] [--mastery-streak N] [--mastery-extension N] [--remediation MODE] [--typicality-weight W] [--opening-variety N] [--out FILE]";

    private static readonly string[] DefaultPolicies = [PolicyNames.Random, PolicyNames.StochasticGreedy, PolicyNames.Adaptive, PolicyNames.Cover];

    public static int Run(string[] args, TextWriter output, TextWriter error)
    {
        var options = CliArguments.Parse(args, flags: [], values: ["--learners", "--seed", "--policies", "--kinds", "--out", "--mastery-streak", "--mastery-extension", "--remediation", "--typicality-weight", "--opening-variety"]);
        if (options is null || options.Positional.Count == 0)
        {
            return Commands.Usage.Fail(error, "robustness needs at least one project folder", Usage);
        }

        var learners = 1000;
        ulong seed = 1;
        if (!options.TryLearners(error, ref learners))
        {
            return ExitCodes.Usage;
        }

        if (!options.TrySeed(error, ref seed))
        {
            return ExitCodes.Usage;
        }

        var policies = options.Value("--policies")?.Split(',', StringSplitOptions.TrimEntries | StringSplitOptions.RemoveEmptyEntries) ?? DefaultPolicies;
        if (policies.FirstOrDefault(p => !PolicyNames.All.Contains(p)) is { } badPolicy)
        {
            error.WriteLine($"unknown policy '{badPolicy}' (known: {string.Join(", ", PolicyNames.All)})");
            return ExitCodes.Usage;
        }

        // Ablations: the teaching rules against learners unlike the model, switched per run.
        if (!TryInt(options, "--mastery-streak", 20, error, out var streak)
            || !TryInt(options, "--mastery-extension", 10, error, out var extension)
            || !TryInt(options, "--opening-variety", 10, error, out var opening))
        {
            return ExitCodes.Usage;
        }

        double? typicality = null;
        if (options.Value("--typicality-weight") is { } tw)
        {
            if (!double.TryParse(tw, NumberStyles.Float, CultureInfo.InvariantCulture, out var parsed) || parsed is < 0 or > 10)
            {
                error.WriteLine("--typicality-weight must be a number between 0 and 10");
                return ExitCodes.Usage;
            }

            typicality = parsed;
        }

        var remediation = options.Value("--remediation");
        if (remediation is not (null or RemediationModes.Representative or RemediationModes.Policy))
        {
            error.WriteLine($"--remediation must be {RemediationModes.Representative} or {RemediationModes.Policy}");
            return ExitCodes.Usage;
        }

        var kinds = new List<LearnerVariant>();
        foreach (var name in options.Value("--kinds")?.Split(',', StringSplitOptions.TrimEntries | StringSplitOptions.RemoveEmptyEntries)
                 ?? [.. Enum.GetValues<LearnerVariant>().Select(SimulateCommand.VariantName)])
        {
            var match = Enum.GetValues<LearnerVariant>().Where(e => SimulateCommand.VariantName(e) == name).ToArray();
            if (match.Length == 0)
            {
                error.WriteLine($"unknown learner kind '{name}' (known: {string.Join(", ", Enum.GetValues<LearnerVariant>().Select(SimulateCommand.VariantName))})");
                return ExitCodes.Usage;
            }

            kinds.Add(match[0]);
        }

        var projects = new List<(string Name, ProjectDefinition Project, ModelVersion Model, ItemFeatures? Features)>();
        foreach (var folder in options.Positional)
        {
            var project = ProjectLoader.Load(folder);
            var model = ModelCompiler.Compile(project);
            ItemFeatures? features = null;
            if (kinds.Any(LearnerKinds.NeedsFeatures))
            {
                try
                {
                    features = ItemFeatures.From(model, project.Items);
                }
                catch (ArgumentException e)
                {
                    error.WriteLine($"{folder}: {e.Message}");
                    return ExitCodes.Usage;
                }
            }

            projects.Add((Path.GetFileName(Path.TrimEndingDirectorySeparator(folder)), project, model, features));
        }

        var cells = (from p in projects from k in kinds from policy in policies select (p, k, policy)).ToArray();
        var results = new SimulationResult[cells.Length];
        var done = 0;
        var showProgress = ReferenceEquals(error, Console.Error) && !Console.IsErrorRedirected;
        var clock = System.Diagnostics.Stopwatch.StartNew();
        Parallel.For(0, cells.Length, new ParallelOptions { MaxDegreeOfParallelism = Environment.ProcessorCount }, i =>
        {
            var (p, kind, policy) = cells[i];
            var session = SessionOptions.FromProject(p.Project.Settings, seed) with { Policy = policy };
            session = session with
            {
                Gate = session.Gate with
                {
                    MasteryStreak = streak ?? session.Gate.MasteryStreak,
                    MasteryExtension = extension ?? session.Gate.MasteryExtension,
                    Remediation = remediation ?? session.Gate.Remediation,
                    TypicalityWeight = typicality ?? session.Gate.TypicalityWeight,
                    OpeningVariety = opening ?? session.Gate.OpeningVariety,
                },
            };
            results[i] = Simulator.Run(p.Model, new SimulationOptions
            {
                Session = session, Learners = learners, Seed = seed, Variant = kind, Cost = p.Project.Settings.Cost,
                Features = LearnerKinds.NeedsFeatures(kind) ? p.Features : null,
            });
            var finished = Interlocked.Increment(ref done);
            if (showProgress)
            {
                lock (error)
                {
                    error.Write(FormattableString.Invariant($"\rrobustness: {finished}/{cells.Length} cells, {clock.Elapsed.TotalSeconds:F0} s"));
                }
            }
        });
        if (showProgress)
        {
            error.WriteLine();
        }

        var table = Table(cells.Select((c, i) => (c.p.Name, c.p.Project.Settings.Gate.TargetError, c.k, c.policy, results[i])).ToArray(), learners, seed);
        if (options.Value("--out") is { } file)
        {
            File.WriteAllText(file, table);
        }

        output.Write(table);
        error.WriteLine(FormattableString.Invariant($"robustness: {cells.Length} cells × {learners} learners in {clock.Elapsed.TotalSeconds:F1} s on {Environment.ProcessorCount} cores"));
        return ExitCodes.Ok;
    }

    private static string Table((string Project, double Target, LearnerVariant Kind, string Policy, SimulationResult Result)[] rows, int learners, ulong seed)
    {
        var text = new StringBuilder();
        text.AppendLine(FormattableString.Invariant($"{learners} learners per row, seed {seed}; 95 % intervals (Wilson for rates, normal for means). precision: released learners within target; qualified: released and within target."));
        text.AppendLine();
        text.AppendLine("| project | learner kind | policy | released | precision | true error at the end | teaching items to release | items per qualified release | cost per qualified release |");
        text.AppendLine("|---|---|---|---|---|---|---|---|---|");
        foreach (var (project, _, kind, policy, r) in rows)
        {
            var released = ProportionIntervals.Wilson(r.Released, r.Learners);
            var precision = r.Released == 0 ? "–" : Rate(r.QualifiedReleases, r.Released);
            var error = r.Curve.Count == 0 ? "–" : FormattableString.Invariant($"{r.MeanFinalTrueError:F3} ({r.Curve[^1].Low:F3}–{r.Curve[^1].High:F3})");
            text.AppendLine(FormattableString.Invariant(
                $"| {project} | {SimulateCommand.VariantName(kind)} | {policy} | {r.ReleaseRate:F3} ({released.Low:F3}–{released.High:F3}) | {precision} | {error} | {Number(r.MeanTeachingItemsToRelease)} | {Number(r.ItemsPerQualifiedRelease)} | {Number(r.CostPerQualifiedRelease, "F2")} |"));
        }

        return text.ToString();
    }

    private static string Rate(int x, int n)
    {
        var interval = ProportionIntervals.Wilson(x, n);
        return FormattableString.Invariant($"{(double)x / n:F3} ({interval.Low:F3}–{interval.High:F3})");
    }

    private static string Number(double value, string format = "F1") =>
        double.IsFinite(value) ? value.ToString(format, CultureInfo.InvariantCulture) : "–";

    private static bool TryInt(CliArguments options, string name, int max, TextWriter error, out int? value)
    {
        value = null;
        if (options.Value(name) is not { } text)
        {
            return true;
        }

        if (!int.TryParse(text, CultureInfo.InvariantCulture, out var parsed) || parsed < 0 || parsed > max)
        {
            error.WriteLine($"{name} must be an integer between 0 and {max}");
            return false;
        }

        value = parsed;
        return true;
    }
}
