using System.Globalization;
using TeachServe.Core.LiveQuality;
using TeachServe.Core.Model;
using TeachServe.Core.Teaching;

namespace TeachServe.Cli.Commands;

/// <summary>
/// <c>teachserve live-quality</c>: released annotators simulated after release (stable, forgetting, a sudden shortcut,
/// random answers) against the drift monitors, compared at equal in-control average run length, with the exact
/// Markov-chain run lengths of the count CUSUM beside the corrected diffusion approximation, and refreshers started
/// at the deployed monitors' alarms.
/// </summary>
internal static class LiveQualityCommand
{
    public const string Usage = "teachserve live-quality DIR [--annotators N] [--seed S] [--arl0 200,500,1000] [--drift RULE_ERROR] [--candidates N] [--refreshers N] [--reference release|target] [--fit N] [--threads N] [--item-alternatives above,random,prior,halfway,near]";

    public static int Run(string[] args, TextWriter output, TextWriter error)
    {
        var options = CliArguments.Parse(args, flags: [], values: ["--annotators", "--seed", "--arl0", "--drift", "--candidates", "--refreshers", "--threads", "--reference", "--fit", "--item-alternatives"]);
        if (options is null || options.Positional.Count != 1)
        {
            return Commands.Usage.Fail(error, "live-quality needs one project folder", Usage);
        }

        var study = new LiveQualityStudyOptions();
        if (!Integer(options, "--annotators", 10, 1_000_000, error, out var annotators)
            || !Integer(options, "--candidates", 0, 1000, error, out var candidates)
            || !Integer(options, "--refreshers", 0, 100_000, error, out var refresherRuns)
            || !Integer(options, "--threads", 1, 64, error, out var threads)
            || !Integer(options, "--fit", 0, 10_000, error, out var fitAnnotators))
        {
            return ExitCodes.Usage;
        }

        ulong seed = 1;
        if (!options.TrySeed(error, ref seed))
        {
            return ExitCodes.Usage;
        }

        IReadOnlyList<double> runLengths = study.RunLengths;
        if (options.Value("--arl0") is { } a)
        {
            var parsed = a.Split(',').Select(v => double.TryParse(v, NumberStyles.Float, CultureInfo.InvariantCulture, out var x) ? x : double.NaN).ToArray();
            if (parsed.Any(x => !(x >= 10 && x <= 100_000)))
            {
                error.WriteLine("--arl0 must be a comma-separated list of run lengths between 10 and 100000");
                return ExitCodes.Usage;
            }

            runLengths = parsed;
        }

        var project = ProjectLoader.Load(options.Positional[0]);
        var settings = project.Settings;
        var gate = settings.Gate;
        var lapse = settings.Learner.Lapse;
        var drift = gate.TargetError + gate.Test.Delta;
        if (options.Value("--drift") is { } d && (!double.TryParse(d, NumberStyles.Float, CultureInfo.InvariantCulture, out drift) || !(drift > gate.TargetError && drift < 1)))
        {
            error.WriteLine($"--drift must be a rule error above the target {gate.TargetError} and below 1");
            return ExitCodes.Usage;
        }

        var atRelease = true;
        if (options.Value("--reference") is { } reference)
        {
            if (reference is not ("release" or "target"))
            {
                error.WriteLine("--reference must be 'release' (the answer error predicted at release) or 'target'");
                return ExitCodes.Usage;
            }

            atRelease = reference == "release";
        }

        IReadOnlyList<DriftAlternative> itemAlternatives = study.ItemAwareAlternatives;
        if (options.Value("--item-alternatives") is { } names)
        {
            var parsed = names.Split(',').Select(n => n switch
            {
                "above" => DriftAlternative.RulesAboveTarget,
                "random" => DriftAlternative.Random,
                "prior" => DriftAlternative.Prior,
                "halfway" => DriftAlternative.HalfwayAboveTarget,
                "near" => DriftAlternative.RulesNearTarget,
                _ => (DriftAlternative?)null,
            }).ToArray();
            if (parsed.Any(p => p is null) || parsed.Distinct().Count() != parsed.Length)
            {
                error.WriteLine("--item-alternatives must be distinct names among above, random, prior, halfway, near, separated by commas");
                return ExitCodes.Usage;
            }

            itemAlternatives = [.. parsed.Select(p => p!.Value)];
        }

        study = study with
        {
            ItemAwareAlternatives = itemAlternatives,
            ReferenceAtRelease = atRelease,
            Annotators = annotators ?? study.Annotators,
            Seed = seed,
            RunLengths = runLengths,
            InControlHorizon = Math.Max(study.InControlHorizon, (int)(runLengths.Max() * 4)),
            Candidates = candidates ?? study.Candidates,
            RefresherRuns = refresherRuns ?? study.RefresherRuns,
            Threads = threads ?? study.Threads,
        };

        var model = ModelCompiler.Compile(project);
        var k = settings.Labels.Count;
        var p0 = GateDesign.AnswerError(gate.TargetError, lapse, k);
        var p1 = GateDesign.AnswerError(drift, lapse, k);
        output.WriteLine(Inv($"{settings.Name}: {model.HypothesisCount} hypotheses, {model.ItemCount} items, {k} labels, lapse {lapse}; target rule error {gate.TargetError} (answer error p0 = {p0:F4}), drift rule error {drift} (p1 = {p1:F4}); seed {seed}"));
        output.WriteLine();
        PrintRunLengths(output, p0, p1, runLengths);

        LiveQualityStudyResult result;
        try
        {
            result = LiveQualityStudy.Run(model, gate.TargetError, drift, lapse, study);
        }
        catch (ArgumentException e)
        {
            error.WriteLine(e.Message);
            return ExitCodes.Usage;
        }

        Print(output, result);
        var fitCount = fitAnnotators ?? 40;
        if (fitCount == 0)
        {
            return ExitCodes.Ok;
        }

        output.WriteLine();
        output.WriteLine(Inv($"forgetting rate recovered by maximum likelihood ({fitCount} released annotators x 300 live checks, forgetting from release):"));
        foreach (var rate in new[] { 0.005, 0.02 })
        {
            var fit = LiveQualityStudy.FitForgetting(model, gate.TargetError, lapse, rate, fitCount, 300, seed);
            output.WriteLine(Inv($"  true {rate}/check: fitted {fit.PerCheck:F4} [{fit.Low:F4}, {fit.High:F4}] (95 % profile-likelihood interval)"));
        }

        return ExitCodes.Ok;
    }

    private static void PrintRunLengths(TextWriter output, double p0, double p1, IReadOnlyList<double> runLengths)
    {
        output.WriteLine("count CUSUM designs (exact Markov-chain ARL; corrected diffusion approximation, Reynolds & Stoumbos lattice Down = 1, for comparison):");
        output.WriteLine("ARL0 asked  Up/Down  limit  h (nats)  p1 used  exact ARL0  exact ARL(p1)  approx ARL0  approx ARL(p1)");
        foreach (var target in runLengths)
        {
            var design = BernoulliCusum.Design(p0, p1, target);
            var coarse = BernoulliCusum.Design(p0, p1, target, maxDown: 1);
            output.WriteLine(Inv($"{target,10:F0}  {design.Up,3}/{design.Down,-3}  {design.Limit,5}  {design.LimitNats,8:F3}  {design.DriftError,7:F4}  {design.InControlRunLength,9:F1}  {design.RunLength(design.DriftError),13:F1}  {BernoulliCusum.DiffusionApproximation(coarse, p0),11:F1}  {BernoulliCusum.DiffusionApproximation(coarse, coarse.DriftError),14:F1}   (Down = 1: limit {coarse.Limit}, exact {coarse.InControlRunLength:F1} / {coarse.RunLength(coarse.DriftError):F1})"));
        }

        output.WriteLine();
    }

    private static void Print(TextWriter output, LiveQualityStudyResult r)
    {
        var o = r.Options;
        output.WriteLine(Inv($"released annotators: mean answer error {r.ReleasedAnswerError:F4}; {o.Annotators} per scenario, change after {o.ChangeAt} checks, in-control horizon {o.InControlHorizon}, {o.AfterChangeHorizon} checks followed after the change"));
        output.WriteLine(Inv($"count CUSUM lattice {r.Lattice.Up}/{r.Lattice.Down}, reference error {r.Lattice.TargetError:F4} ({(o.ReferenceAtRelease ? "predicted at release" : "target")}) against p1 {r.Lattice.DriftError:F4}; limits swept, each at its pooled in-control ARL"));
        output.WriteLine(Inv($"candidate rules watched: {r.CandidateCount}, holding {r.CandidateCoverage:P1} of the prior mass of the shortcut rules drawn; window rule: last {o.Window} checks"));
        var ia = r.ItemAware;
        var cal = ia.Design.Calibration!;
        output.WriteLine(Inv($"item-aware CUSUM: alternatives {string.Join(", ", ia.Design.Alternatives)}; limits swept every {ia.Step} nats; deployed limit {ia.Design.Limit:F2} nats calibrated for ARL0 {cal.TargetRunLength:F0} on {cal.Annotators} simulated in-control annotators x {cal.ChecksEach} checks (seed {cal.Seed}): ARL0 {cal.InControlRunLength:F1} (SE {cal.StandardError:F1}, {cal.Alarms} alarms); measured in this study at that limit: {ia.MeasuredRunLength:F1} (SE {ia.MeasuredStandardError:F1}, {ia.MeasuredAlarms} alarms)"));
        output.WriteLine();
        output.WriteLine("detection delay (checks after the change) at equal in-control ARL, mean [95 % interval], runs counted / runs whose rule never went above target; every limit is its own chart, restarted after each false alarm:");
        output.WriteLine("| scenario | ARL0 | " + string.Join(" | ", Monitors) + " | count / window | candidate / window | item-aware / window |");
        output.WriteLine("|---|---|---|---|---|---|---|---|---|");
        foreach (var scenario in r.Scenarios.Skip(1))
        {
            foreach (var arl in o.RunLengths)
            {
                var cells = Monitors
                    .Select(m => r.Delays.Single(d => d.Scenario == scenario && d.Monitor == m && d.RunLength == arl))
                    .Select(d => Inv($"{d.Delay:F1} [{d.Low:F1}, {d.High:F1}] {d.Runs}/{d.Excluded}"));
                var ratios = Monitors.Where(m => m != MonitorNames.Window)
                    .Select(m => r.Ratios.Single(x => x.Scenario == scenario && x.Monitor == m && x.RunLength == arl))
                    .Select(x => Inv($"{x.Ratio:F2} [{x.Low:F2}, {x.High:F2}]"));
                output.WriteLine(Inv($"| {scenario} | {arl:F0} | {string.Join(" | ", cells)} | {string.Join(" | ", ratios)} |"));
            }
        }

        output.WriteLine();
        var m = r.Mixture;
        output.WriteLine(Inv($"always-valid mixture test (beta(1,4) over errors above p0), alpha {m.Alpha}: stable annotators alarming within {o.InControlHorizon} checks (never restarted) {m.StableAlarms}/{m.StableRuns} = {m.AlarmRate:F4} [{m.AlarmRateLow:F4}, {m.AlarmRateHigh:F4}] (bound: alpha, over all time)"));
        foreach (var (scenario, delay, runs) in m.Delays)
        {
            output.WriteLine(Inv($"  {scenario}: mean delay {delay:F1} over {runs} runs"));
        }

        output.WriteLine();
        output.WriteLine(Inv($"refreshers at the first alarm after the change (count CUSUM with exact ARL0 >= {o.DeployedRunLength} at its reference error, or candidate charts at simulated ARL0 >= {o.DeployedRunLength}); live belief with forgetting {o.AssumedForgetting}/check; at most 10 items, then a 10-item check:"));
        output.WriteLine("| scenario | refreshers | items, median (mean) | answer error before, median | after, median | under target after [95 %] | check passed |");
        output.WriteLine("|---|---|---|---|---|---|---|");
        foreach (var f in r.Refreshers)
        {
            output.WriteLine(Inv($"| {f.Scenario} | {f.Runs} | {f.MedianItems:F0} ({f.MeanItems:F1}) | {f.MedianErrorBefore:F3} | {f.MedianErrorAfter:F3} | {f.UnderTarget:P0} [{f.UnderTargetLow:P0}, {f.UnderTargetHigh:P0}] | {f.Passed:P0} |"));
        }
    }

    private static readonly string[] Monitors = [MonitorNames.CountCusum, MonitorNames.CandidateCusum, MonitorNames.ItemAwareCusum, MonitorNames.Window];

    private static bool Integer(CliArguments options, string name, int min, int max, TextWriter error, out int? value)
    {
        value = null;
        if (options.Value(name) is not { } text)
        {
            return true;
        }

        if (!int.TryParse(text, CultureInfo.InvariantCulture, out var v) || v < min || v > max)
        {
            error.WriteLine($"{name} must be an integer between {min} and {max}");
            return false;
        }

        value = v;
        return true;
    }

    private static string Inv(FormattableString text) => text.ToString(CultureInfo.InvariantCulture);
}
