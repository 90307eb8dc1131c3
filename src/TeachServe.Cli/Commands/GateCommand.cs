using System.Globalization;
using TeachServe.Core;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Statistics;
using TeachServe.Core.Teaching;

namespace TeachServe.Cli.Commands;

/// <summary>
/// <c>teachserve gate</c>: what a project's gate promises and what it costs. The exact operating characteristic of
/// its test (against the former rule, Wald's approximate bounds with a Wilson bound at truncation, for comparison),
/// then a seeded simulation of each test mode against learners who learn as assumed and learners who do not.
/// </summary>
internal static class GateCommand
{
    public const string Usage = "teachserve gate DIR [--learners N] [--seed S] [--modes sequential,fixed,belief] [--variants assumed,slow,...] [--former ITEMS,DELTA,ALPHA,BETA]";

    /// <summary>The test settings the seed projects shipped with before the test was exact (for the comparison column).</summary>
    private static readonly (int Items, double Delta, double Alpha, double Beta) FormerDefaults = (30, 0.15, 0.05, 0.10);

    public static int Run(string[] args, TextWriter output, TextWriter error)
    {
        var options = CliArguments.Parse(args, flags: [], values: ["--learners", "--seed", "--modes", "--variants", "--former"]);
        if (options is null || options.Positional.Count != 1)
        {
            return Commands.Usage.Fail(error, "gate needs one project folder", Usage);
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

        string[] modes = [.. (options.Value("--modes") ?? $"{TestModes.Sequential},{TestModes.Fixed},{TestModes.Belief}").Split(',', StringSplitOptions.TrimEntries | StringSplitOptions.RemoveEmptyEntries)];
        if (modes.FirstOrDefault(m => m is not (TestModes.Sequential or TestModes.Fixed or TestModes.Belief)) is { } badMode)
        {
            error.WriteLine($"unknown test mode '{badMode}' (known: {TestModes.Sequential}, {TestModes.Fixed}, {TestModes.Belief})");
            return ExitCodes.Usage;
        }

        var variantNames = (options.Value("--variants") ?? "assumed,slow,forgetful,stuck,random-answers").Split(',', StringSplitOptions.TrimEntries | StringSplitOptions.RemoveEmptyEntries);
        var variants = new List<LearnerVariant>();
        foreach (var name in variantNames)
        {
            var match = Enum.GetValues<LearnerVariant>().Where(e => SimulateCommand.VariantName(e) == name).ToArray();
            if (match.Length == 0)
            {
                error.WriteLine($"unknown learner variant '{name}' (known: {string.Join(", ", Enum.GetValues<LearnerVariant>().Select(SimulateCommand.VariantName))})");
                return ExitCodes.Usage;
            }

            variants.Add(match[0]);
        }

        var formerSettings = FormerDefaults;
        if (options.Value("--former") is { } f)
        {
            var parts = f.Split(',');
            if (parts.Length != 4 || !int.TryParse(parts[0], CultureInfo.InvariantCulture, out var items) || items is < 1 or > 500
                || !double.TryParse(parts[1], NumberStyles.Float, CultureInfo.InvariantCulture, out var delta) || !(delta is > 0 and < 1)
                || !double.TryParse(parts[2], NumberStyles.Float, CultureInfo.InvariantCulture, out var alpha) || !(alpha is > 0 and < 0.5)
                || !double.TryParse(parts[3], NumberStyles.Float, CultureInfo.InvariantCulture, out var beta) || !(beta is > 0 and < 0.5))
            {
                error.WriteLine("--former must be ITEMS,DELTA,ALPHA,BETA, e.g. 30,0.15,0.05,0.1");
                return ExitCodes.Usage;
            }

            formerSettings = (items, delta, alpha, beta);
        }

        var project = ProjectLoader.Load(options.Positional[0]);
        if (ProjectValidator.TestPool(project.Settings, project.Items, ProjectSources.Folder) is { } pool)
        {
            error.WriteLine($"{pool.File}: {pool.Message}");
            return ExitCodes.Usage;
        }

        var settings = project.Settings;
        var gate = settings.Gate;
        var k = settings.Labels.Count;
        var lapse = settings.Learner.Lapse;
        var design = GateDesign.CreateOrClosest(gate, k, lapse);
        output.WriteLine(Inv($"{settings.Name}: target {gate.TargetError}, delta {gate.Test.Delta}, alpha {gate.Test.Alpha}, beta {gate.Test.Beta} over {design.Attempts} attempt(s), at most {gate.Test.MaxItems} items, lapse {lapse}, {k} labels"));
        output.WriteLine(Inv($"exact test: at most {design.Test.MaxItems} counted items per attempt; P(attempt fails | target) {design.Test.AchievedAlpha:F4}, P(attempt releases | target + delta) {design.Test.AchievedBeta:F4}"));
        output.WriteLine();
        output.WriteLine(Inv($"operating characteristic, per attempt (rule error; lapses on top). Former rule: {formerSettings.Items} items, delta {formerSettings.Delta}, alpha {formerSettings.Alpha}, beta {formerSettings.Beta}, {gate.Test.Mode}:"));
        output.WriteLine("rule error  answer error   former rule: release  items   exact: release  items   all attempts: release  items");
        var former = new FormerRule(gate with { Test = gate.Test with { MaxItems = formerSettings.Items, Delta = formerSettings.Delta, Alpha = formerSettings.Alpha, Beta = formerSettings.Beta } });
        foreach (var point in design.OperatingCharacteristic(design.StandardErrorRates()))
        {
            var p = GateDesign.AnswerError(point.RuleError, lapse, k);
            var (formerRelease, formerItems) = former.Evaluate(p);
            output.WriteLine(Inv($"{point.RuleError,10:F3}  {p,12:F4}   {formerRelease,20:F3}  {formerItems,5:F1}   {point.AttemptRelease,14:F3}  {point.AttemptItems,5:F1}   {point.Release,21:F3}  {point.Items,5:F1}"));
        }

        output.WriteLine();
        var model = ModelCompiler.Compile(project);
        ItemFeatures? features = null;
        if (variants.Any(LearnerKinds.NeedsFeatures))
        {
            try
            {
                features = ItemFeatures.From(model, project.Items);
            }
            catch (ArgumentException e)
            {
                error.WriteLine(e.Message);
                return ExitCodes.Usage;
            }
        }

        var cells = (from variant in variants from mode in modes select (variant, mode)).ToArray();
        var results = new SimulationResult[cells.Length];
        var done = 0;
        var progress = error == Console.Error && !Console.IsErrorRedirected;
        Parallel.For(0, cells.Length, new ParallelOptions { MaxDegreeOfParallelism = Environment.ProcessorCount }, i =>
        {
            var (variant, mode) = cells[i];
            var session = SessionOptions.FromProject(settings, seed);
            session = session with { Gate = session.Gate with { Test = session.Gate.Test with { Mode = mode } } };
            results[i] = Simulator.Run(model, new SimulationOptions { Session = session, Learners = learners, Seed = seed, Variant = variant, Cost = settings.Cost, Features = features });
            var finished = Interlocked.Increment(ref done);
            if (progress)
            {
                lock (error)
                {
                    error.Write($"\rsimulating {finished}/{cells.Length} cells");
                }
            }
        });
        if (progress)
        {
            error.WriteLine();
        }

        output.WriteLine(Inv($"simulation: {learners} learners per row, seed {seed}, policy {settings.Policy}; 95 % Wilson intervals"));
        output.WriteLine("variant         mode        released            false release (err > target+delta)   test items  items/qualified  cost/qualified");
        for (var i = 0; i < cells.Length; i++)
        {
            var r = results[i];
            var release = ProportionIntervals.Wilson(r.Released, r.Learners);
            var bad = r.Unqualified == 0 ? "      -/0" : Inv($"{r.UnqualifiedReleased,5}/{r.Unqualified,-4} ({Fraction(r.UnqualifiedReleased, r.Unqualified)})");
            output.WriteLine(Inv($"{SimulateCommand.VariantName(cells[i].variant),-15} {cells[i].mode,-10} {r.ReleaseRate,5:F3} [{release.Low:F3}, {release.High:F3}]  {bad,-36}  {r.MeanTestItems,10:F1}  {r.ItemsPerQualifiedRelease,15:F1}  {r.CostPerQualifiedRelease,14:F2}"));
        }

        output.WriteLine("false release: released learners whose true error at the end exceeds target + delta, of all such learners");
        return ExitCodes.Ok;
    }

    private static string Fraction(int x, int n)
    {
        var interval = ProportionIntervals.Wilson(x, n);
        return Inv($"{(double)x / n:F3} [{interval.Low:F3}, {interval.High:F3}]");
    }

    private static string Inv(FormattableString text) => text.ToString(CultureInfo.InvariantCulture);

    /// <summary>
    /// The rule the gate used before its test was exact, kept here only to show the difference: Wald's approximate
    /// bounds A = (1 − β)/α, B = β/(1 − α) on target vs target + delta (no lapses mapped in, no beta spent over
    /// retakes), and at truncation a pass when the one-sided Wilson upper bound at 1 − alpha is ≤ target + delta.
    /// Its release probability and expected length are computed exactly by path counting.
    /// </summary>
    private sealed class FormerRule(GateSettings gate)
    {
        private readonly BernoulliSprt _sprt = new(gate.TargetError, Math.Min(0.999, gate.TargetError + gate.Test.Delta), gate.Test.Alpha, gate.Test.Beta);

        public (double Release, double Items) Evaluate(double p)
        {
            var n = gate.Test.MaxItems;
            var mass = new double[n + 2];
            mass[0] = 1;
            double release = 0, items = 0;
            for (var trials = 1; trials <= n; trials++)
            {
                var next = new double[n + 2];
                for (var e = 0; e < trials; e++)
                {
                    next[e] += mass[e] * (1 - p);
                    next[e + 1] += mass[e] * p;
                }

                for (var e = 0; e <= trials; e++)
                {
                    var decision = gate.Test.Mode == TestModes.Fixed ? SprtDecision.Continue : _sprt.Decide(e, trials);
                    var last = trials == n;
                    var passes = decision == SprtDecision.AcceptNull
                        || (last && decision == SprtDecision.Continue && ProportionIntervals.WilsonUpper(e, trials, 1 - gate.Test.Alpha) <= gate.TargetError + gate.Test.Delta);
                    if (decision != SprtDecision.Continue || last)
                    {
                        release += passes ? next[e] : 0;
                        items += next[e] * trials;
                        next[e] = 0;
                    }
                }

                mass = next;
            }

            return (release, items);
        }
    }
}
