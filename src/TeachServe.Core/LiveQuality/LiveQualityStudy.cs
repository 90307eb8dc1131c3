using TeachServe.Core.Model;
using TeachServe.Core.Statistics;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// Simulated annotators after release × drift monitors. Released annotators hold a rule drawn from the prior restricted
/// to rules within target (what the gate releases) and lapse at the project's rate; live checks are drawn uniformly from
/// the model's items. Every monitor is swept over its limits in one pass per run (the first time a statistic reaches each
/// level), its in-control ARL is measured on stable annotators, and delays are compared at equal in-control ARL by
/// interpolating in log ARL0 between adjacent limits (integer statistics jump between ARL0 levels, DESIGN 2.7a). The same
/// annotators (same random streams before the change) meet every scenario and every monitor.
/// </summary>
public static class LiveQualityStudy
{
    private const int CandidateLevels = 16;
    private const int NotReached = int.MaxValue;
    private const double Z95 = 1.959963984540054;

    public static LiveQualityStudyResult Run(ModelVersion model, double targetRuleError, double driftRuleError, double lapse, LiveQualityStudyOptions options, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(options);
        options.Validate();
        var k = model.LabelCount;
        var p0 = GateDesign.AnswerError(targetRuleError, lapse, k);
        var p1 = GateDesign.AnswerError(driftRuleError, lapse, k);
        var error = model.Error;
        var release = new double[model.HypothesisCount];
        var shortcut = new double[model.HypothesisCount];
        for (var h = 0; h < release.Length; h++)
        {
            release[h] = error[h] <= targetRuleError ? model.Prior[h] : 0;
            shortcut[h] = error[h] > targetRuleError && error[h] <= options.MaxShortcutError ? model.Prior[h] : 0;
        }

        if (release.Sum() <= 0 || shortcut.Sum() <= 0)
        {
            throw new ArgumentException("The model needs rules within target (to release) and rules just above it (to drift to).", nameof(model));
        }

        var candidates = DriftCandidates.Choose(model, release, targetRuleError, options.Candidates);
        var coverage = candidates.Sum(g => shortcut[g]) / shortcut.Sum();
        var releasedError = 0.0;
        for (var h = 0; h < release.Length; h++)
        {
            releasedError += release[h] * GateDesign.AnswerError(error[h], lapse, k);
        }

        releasedError /= release.Sum();

        // The chart's weights: p0 is the target's answer error, or (the default) the answer error the model predicts at
        // release, so that the reference value sits between what a released annotator does and drift; either way the
        // limit is then chosen for the in-control ARL. A lattice of at most 4 steps per right answer keeps the sweep
        // over every limit affordable.
        const int maxDown = 4;
        var reference = options.ReferenceAtRelease ? releasedError : p0;
        var lattice = BernoulliCusum.WithLimit(reference, p1, 1, maxDown);
        var countLevels = BernoulliCusum.Design(reference, p1, options.RunLengths.Max() * 20, maxDown).Limit;
        var deployed = BernoulliCusum.Design(reference, p1, options.DeployedRunLength, maxDown);
        // The item-aware CUSUM: weights from the released population's belief (the prior within target), swept over
        // limits on a grid in nats like the other monitors; and, separately, the design a server would deploy, its limit
        // calibrated for the deployed ARL0 on other simulated annotators, whose ARL0 the study then measures afresh.
        var itemAware = ItemAwareCusum.Weights(model, release, lapse, targetRuleError, driftRuleError, options.ItemAwareAlternatives);
        var itemAwareDeployed = ItemAwareCusum.Calibrate(
            itemAware,
            ItemAwareCusum.RuleAnnotators(model, release, lapse),
            options.DeployedRunLength,
            new ItemAwareCalibrationOptions { Seed = SeededRandom.Derive(options.Seed, 0x17E4A3A8E) });
        var context = new Context(model, options, p0, lattice, countLevels, candidates, release, shortcut, lapse, targetRuleError, itemAware, itemAwareDeployed.Limit);

        var scenarios = new List<Scenario> { new("stable", LiveBehaviour.Stable, 0, 0) };
        scenarios.AddRange(options.ForgettingRates.Select((r, i) => new Scenario(string.Create(System.Globalization.CultureInfo.InvariantCulture, $"forgetting {r:0.###}/check"), LiveBehaviour.Forgetting, r, 1 + i)));
        scenarios.Add(new Scenario("shortcut rule", LiveBehaviour.Shortcut, 0, 100));
        scenarios.Add(new Scenario("shortcut among candidates", LiveBehaviour.Shortcut, 1, 102));
        scenarios.Add(new Scenario("random answers", LiveBehaviour.Random, 0, 101));

        var parallel = new ParallelOptions { MaxDegreeOfParallelism = options.Threads, CancellationToken = cancellationToken };
        var runs = new RunRecord[scenarios.Count][];
        for (var s = 0; s < scenarios.Count; s++)
        {
            var scenario = scenarios[s];
            var records = new RunRecord[options.Annotators];
            Parallel.For(0, options.Annotators, parallel, i => records[i] = context.Simulate(i, scenario, null));
            runs[s] = records;
        }

        var levels = new List<MonitorLevel>();
        var monitors = new[] { MonitorNames.CountCusum, MonitorNames.CandidateCusum, MonitorNames.ItemAwareCusum, MonitorNames.Window };
        var stable = runs[0];
        var arl = new Dictionary<string, double[]>();
        foreach (var monitor in monitors)
        {
            var count = LevelCount(context, monitor);
            var values = new double[count + 1];
            double checks = stable.Sum(r => (double)r.Checks);
            for (var level = 1; level <= count; level++)
            {
                // Pooled over the released population: in-control checks per false alarm, each limit's chart restarting
                // after its alarms (for one annotator this estimates its ARL0; for a mixed population, their harmonic mean).
                var alarms = stable.Sum(r => r.Alarms(monitor)[level]);
                values[level] = alarms == 0 ? checks : checks / alarms;
                levels.Add(new MonitorLevel(monitor, level, values[level], alarms == 0 ? 1 : 0));
            }

            arl[monitor] = values;
        }

        var delays = new List<DelayAtRunLength>();
        var ratios = new List<DelayRatio>();
        for (var s = 1; s < scenarios.Count; s++)
        {
            foreach (var target in options.RunLengths)
            {
                var byMonitor = new Dictionary<string, DelayAtRunLength>();
                foreach (var monitor in monitors)
                {
                    var d = Interpolate(scenarios[s].Name, monitor, target, arl[monitor], runs[s]);
                    byMonitor[monitor] = d;
                    delays.Add(d);
                }

                var window = byMonitor[MonitorNames.Window];
                foreach (var monitor in monitors.Where(m => m != MonitorNames.Window))
                {
                    var d = byMonitor[monitor];
                    var ratio = d.Delay / window.Delay;
                    var seLog = Math.Sqrt(Math.Pow((d.High - d.Low) / (2 * Z95 * d.Delay), 2) + Math.Pow((window.High - window.Low) / (2 * Z95 * window.Delay), 2));
                    ratios.Add(new DelayRatio(scenarios[s].Name, monitor, target, ratio, ratio * Math.Exp(-Z95 * seLog), ratio * Math.Exp(Z95 * seLog)));
                }
            }
        }

        // The always-valid test over the whole horizon: its false-alarm probability is bounded by α (Ville).
        var stableAlarms = stable.Count(r => r.MixtureFirst != NotReached);
        var alarmInterval = ProportionIntervals.Wilson(stableAlarms, stable.Length);
        var mixtureDelays = new List<(string, double, int)>();
        for (var s = 1; s < scenarios.Count; s++)
        {
            var counted = runs[s].Where(r => r.Change >= 0 && r.MixtureFirst > r.Change).ToArray();
            var mean = counted.Length == 0 ? double.NaN : counted.Average(r => (double)(Math.Min(r.MixtureFirst, r.End) - r.Change));
            mixtureDelays.Add((scenarios[s].Name, mean, counted.Length));
        }

        var deployedChecks = stable.Sum(r => (double)r.Checks);
        var deployedAlarms = stable.Sum(r => r.AlarmsItemAwareDeployed);
        var deployedMean = (double)deployedAlarms / stable.Length;
        var deployedVariance = stable.Sum(r => Math.Pow(r.AlarmsItemAwareDeployed - deployedMean, 2)) / (stable.Length - 1);
        var deployedArl = deployedAlarms == 0 ? double.PositiveInfinity : deployedChecks / deployedAlarms;
        var itemAwareCheck = new ItemAwareSummary(
            itemAwareDeployed,
            deployedArl,
            deployedAlarms == 0 ? double.NaN : deployedArl * Math.Sqrt(deployedVariance) / (deployedMean * Math.Sqrt(stable.Length)),
            deployedAlarms,
            options.ItemAwareStep);

        var mixture = new MixtureSummary(options.MixtureAlpha, stable.Length, stableAlarms, (double)stableAlarms / stable.Length, alarmInterval.Low, alarmInterval.High, mixtureDelays);

        // Refreshers at the first alarm after the change of the deployed pair: the count CUSUM designed for the deployed
        // ARL0 at p0, and the candidate charts at the smallest limit whose simulated ARL0 reaches it.
        var candidateLimit = FirstLevelAtLeast(arl[MonitorNames.CandidateCusum], options.DeployedRunLength);
        var trigger = new Trigger(deployed.Limit, candidateLimit);
        var refreshers = new List<RefresherSummary>();
        for (var s = 1; s < scenarios.Count; s++)
        {
            var scenario = scenarios[s];
            var outcomes = new RunRecord[Math.Min(options.RefresherRuns, options.Annotators)];
            Parallel.For(0, outcomes.Length, parallel, i => outcomes[i] = context.Simulate(i, scenario, trigger));
            var done = outcomes.Where(o => o.Refresher is not null).Select(o => o.Refresher!).ToArray();
            if (done.Length == 0)
            {
                refreshers.Add(new RefresherSummary(scenario.Name, 0, double.NaN, double.NaN, double.NaN, double.NaN, double.NaN, double.NaN, double.NaN, double.NaN));
                continue;
            }

            var under = done.Count(o => o.ErrorAfter <= p0);
            var interval = ProportionIntervals.Wilson(under, done.Length);
            refreshers.Add(new RefresherSummary(
                scenario.Name,
                done.Length,
                Median(done.Select(o => (double)o.Items)),
                done.Average(o => o.Items),
                Median(done.Select(o => o.ErrorBefore)),
                Median(done.Select(o => o.ErrorAfter)),
                (double)under / done.Length,
                interval.Low,
                interval.High,
                (double)done.Count(o => o.Passed) / done.Length));
        }

        return new LiveQualityStudyResult
        {
            TargetAnswerError = p0,
            Lattice = lattice,
            CandidateCount = candidates.Length,
            CandidateCoverage = coverage,
            ReleasedAnswerError = releasedError,
            Scenarios = [.. scenarios.Select(s => s.Name)],
            Levels = levels,
            Delays = delays,
            Ratios = ratios,
            Mixture = mixture,
            ItemAware = itemAwareCheck,
            Refreshers = refreshers,
            Options = options,
        };
    }

    /// <summary>
    /// Recovers a forgetting rate from simulated live records: released annotators (rule from the prior within target)
    /// who fall back to a prior rule with probability <paramref name="rate"/> per check, fitted by <see cref="ForgettingFit"/>.
    /// </summary>
    public static ForgettingFitResult FitForgetting(ModelVersion model, double targetRuleError, double lapse, double rate, int annotators, int checks, ulong seed)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentOutOfRangeException.ThrowIfLessThan(annotators, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(checks, 1);
        var release = new double[model.HypothesisCount];
        for (var h = 0; h < release.Length; h++)
        {
            release[h] = model.Error[h] <= targetRuleError ? model.Prior[h] : 0;
        }

        var total = release.Sum();
        var records = new List<LiveRecord>();
        for (var a = 0; a < annotators; a++)
        {
            var random = new SeededRandom(SeededRandom.Derive(seed, (ulong)a));
            var annotator = new LiveAnnotator(model, random.Choose(release, total), lapse, model.Q, random);
            var record = new List<LiveCheck>(checks);
            for (var t = 0; t < checks; t++)
            {
                if (random.NextDouble() < rate)
                {
                    annotator.Forget();
                }

                var item = random.NextInt(model.ItemCount);
                record.Add(new LiveCheck(item, annotator.Answer(item), model.TrueLabel(item)));
            }

            records.Add(new LiveRecord(release, record));
        }

        return ForgettingFit.Fit(model, lapse, records);
    }

    private static int LevelCount(Context context, string monitor) => monitor switch
    {
        MonitorNames.CountCusum => context.CountLevels,
        MonitorNames.CandidateCusum => CandidateLevels,
        MonitorNames.ItemAwareCusum => context.Options.ItemAwareLevels,
        _ => context.Options.Window,
    };

    private static int FirstLevelAtLeast(double[] arl, double target)
    {
        for (var level = 1; level < arl.Length; level++)
        {
            if (arl[level] >= target)
            {
                return level;
            }
        }

        return arl.Length - 1;
    }

    private static double Median(IEnumerable<double> values)
    {
        var sorted = values.Order().ToArray();
        var n = sorted.Length;
        return n % 2 == 1 ? sorted[n / 2] : 0.5 * (sorted[(n / 2) - 1] + sorted[n / 2]);
    }

    /// <summary>Mean delay (with its standard error) at one level, over runs that changed and had no alarm before the change.</summary>
    private static (double Mean, double Se, int Runs, int Excluded) DelayAt(string monitor, int level, RunRecord[] runs)
    {
        double sum = 0, squares = 0;
        int n = 0, excluded = 0;
        foreach (var run in runs)
        {
            var first = run.First(monitor)[level];
            if (run.Change < 0 || first <= run.Change)
            {
                excluded++;
                continue;
            }

            double delay = Math.Min(first, run.End) - run.Change;
            sum += delay;
            squares += delay * delay;
            n++;
        }

        if (n < 2)
        {
            return (double.NaN, double.NaN, n, excluded);
        }

        var mean = sum / n;
        var variance = Math.Max(0, (squares - (n * mean * mean)) / (n - 1));
        return (mean, Math.Sqrt(variance / n), n, excluded);
    }

    private static DelayAtRunLength Interpolate(string scenario, string monitor, double target, double[] arl, RunRecord[] runs)
    {
        var upper = -1;
        for (var level = 1; level < arl.Length; level++)
        {
            if (arl[level] >= target)
            {
                upper = level;
                break;
            }
        }

        if (upper < 0)
        {
            return new DelayAtRunLength(scenario, monitor, target, double.NaN, double.NaN, double.NaN, 0, runs.Length);
        }

        var hi = DelayAt(monitor, upper, runs);
        if (upper == 1 || arl[upper] == target)
        {
            return new DelayAtRunLength(scenario, monitor, target, hi.Mean, hi.Mean - (Z95 * hi.Se), hi.Mean + (Z95 * hi.Se), hi.Runs, hi.Excluded);
        }

        var lo = DelayAt(monitor, upper - 1, runs);
        var w = (Math.Log(target) - Math.Log(arl[upper - 1])) / (Math.Log(arl[upper]) - Math.Log(arl[upper - 1]));
        var mean = ((1 - w) * lo.Mean) + (w * hi.Mean);

        // The two levels are measured on the same runs, so their errors are positively correlated; adding the standard
        // errors (perfect correlation) is the conservative choice.
        var se = ((1 - w) * lo.Se) + (w * hi.Se);
        return new DelayAtRunLength(scenario, monitor, target, mean, mean - (Z95 * se), mean + (Z95 * se), Math.Min(lo.Runs, hi.Runs), Math.Max(lo.Excluded, hi.Excluded));
    }

    private sealed record Scenario(string Name, LiveBehaviour Behaviour, double Rate, int Key);

    private sealed record Trigger(int CountLimit, int CandidateLimit);

    private sealed record RefresherOutcomeRecord(int Items, bool Passed, double ErrorBefore, double ErrorAfter);

    private sealed class RunRecord
    {
        public required int[] FirstCount { get; init; }
        public required int[] FirstCandidate { get; init; }
        public required int[] FirstWindow { get; init; }
        public required int[] AlarmsCount { get; init; }
        public required int[] AlarmsCandidate { get; init; }
        public required int[] AlarmsWindow { get; init; }
        public required int[] FirstItemAware { get; init; }
        public required int[] AlarmsItemAware { get; init; }
        public int AlarmsItemAwareDeployed { get; set; }
        public int Checks { get; set; }
        public int MixtureFirst { get; set; } = NotReached;
        public int Change { get; set; } = -1;
        public int End { get; set; }
        public RefresherOutcomeRecord? Refresher { get; set; }

        public int[] First(string monitor) => monitor switch
        {
            MonitorNames.CountCusum => FirstCount,
            MonitorNames.CandidateCusum => FirstCandidate,
            MonitorNames.ItemAwareCusum => FirstItemAware,
            _ => FirstWindow,
        };

        public int[] Alarms(string monitor) => monitor switch
        {
            MonitorNames.CountCusum => AlarmsCount,
            MonitorNames.CandidateCusum => AlarmsCandidate,
            MonitorNames.ItemAwareCusum => AlarmsItemAware,
            _ => AlarmsWindow,
        };
    }

    private sealed class Context(
        ModelVersion model,
        LiveQualityStudyOptions options,
        double p0,
        BernoulliCusumDesign lattice,
        int countLevels,
        int[] candidates,
        double[] release,
        double[] shortcut,
        double lapse,
        double targetRuleError,
        ItemAwareCusumDesign itemAware,
        double itemAwareDeployedLimit)
    {
        private readonly double _releaseTotal = release.Sum();
        private readonly double _shortcutTotal = shortcut.Sum();
        private readonly double[] _candidateShortcut = [.. shortcut.Select((w, h) => candidates.Contains(h) ? w : 0)];
        private double CandidateShortcutTotal => _candidateShortcut.Sum();

        public LiveQualityStudyOptions Options => options;
        public int CountLevels => countLevels;

        public RunRecord Simulate(int index, Scenario scenario, Trigger? trigger)
        {
            var pre = new SeededRandom(SeededRandom.Derive(options.Seed, (ulong)index));
            var post = new SeededRandom(SeededRandom.Derive(SeededRandom.Derive(options.Seed, 0xC4A9E + (ulong)scenario.Key), (ulong)index));
            var annotator = new LiveAnnotator(model, pre.Choose(release, _releaseTotal), lapse, model.Q, pre);
            var record = new RunRecord
            {
                FirstCount = Filled(countLevels + 1),
                FirstCandidate = Filled(CandidateLevels + 1),
                FirstWindow = Filled(options.Window + 1),
                AlarmsCount = new int[countLevels + 1],
                AlarmsCandidate = new int[CandidateLevels + 1],
                AlarmsWindow = new int[options.Window + 1],
                FirstItemAware = Filled(options.ItemAwareLevels + 1),
                AlarmsItemAware = new int[options.ItemAwareLevels + 1],
            };

            // Every limit is its own chart, restarted after each of its alarms, so that false alarms before the change
            // leave each chart where a deployed one would be (no run is dropped for them).
            var counts = new int[countLevels + 1];
            var candidateStats = new int[(CandidateLevels + 1) * candidates.Length];
            var windowStart = new int[options.Window + 1];
            var outcomes = new List<bool>();
            var prefix = new List<int> { 0 };

            var stableRun = scenario.Behaviour == LiveBehaviour.Stable;
            var end = stableRun ? options.InControlHorizon : options.ChangeAt + options.AfterChangeHorizon;
            var random = pre;
            var history = trigger is null ? null : new List<LiveCheck>();
            int deployedCount = 0, pending = countLevels + CandidateLevels + options.Window + options.ItemAwareLevels;
            var alternatives = itemAware.Alternatives.Count;
            var itemAwareStats = new double[(options.ItemAwareLevels + 1) * alternatives];
            var itemAwareDeployed = new double[alternatives];
            var increments = new double[alternatives];
            var deployedCandidates = new int[candidates.Length];
            var t = 0;
            while (t < end)
            {
                if (!stableRun && t == options.ChangeAt)
                {
                    random = post;
                    annotator.UseRandom(post);
                    switch (scenario.Behaviour)
                    {
                        case LiveBehaviour.Shortcut when scenario.Rate > 0 && CandidateShortcutTotal > 0:
                            // The best case for the candidate charts: the annotator drifts to one of the rules they watch.
                            annotator.SwitchTo(post.Choose(_candidateShortcut, CandidateShortcutTotal));
                            record.Change = t;
                            break;
                        case LiveBehaviour.Shortcut:
                            annotator.SwitchTo(post.Choose(shortcut, _shortcutTotal));
                            record.Change = t;
                            break;
                        case LiveBehaviour.Random:
                            annotator.StartGuessing();
                            record.Change = t;
                            break;
                    }
                }

                if (scenario.Behaviour == LiveBehaviour.Forgetting && t >= options.ChangeAt)
                {
                    if (random.NextDouble() < scenario.Rate)
                    {
                        annotator.Forget();
                    }

                    if (record.Change < 0 && annotator.AnswerError > p0)
                    {
                        record.Change = t;
                        end = t + options.AfterChangeHorizon;
                    }
                }

                t++;
                var item = random.NextInt(model.ItemCount);
                var truth = model.TrueLabel(item);
                var answer = annotator.Answer(item);
                var wrong = answer != truth;
                history?.Add(new LiveCheck(item, answer, truth));
                var afterChange = record.Change >= 0 && t > record.Change;

                for (var level = 1; level <= countLevels; level++)
                {
                    var v = lattice.Step(counts[level], wrong);
                    if (v >= level)
                    {
                        Alarm(record.AlarmsCount, record.FirstCount, level, t, afterChange, ref pending);
                        v = 0;
                    }

                    counts[level] = v;
                }

                outcomes.Add(wrong);
                prefix.Add(prefix[^1] + (wrong ? 1 : 0));
                var w = options.Window;
                var inWindow = t >= w ? prefix[t] - prefix[t - w] : -1;
                for (var level = 1; level <= w; level++)
                {
                    if (t - windowStart[level] >= w && inWindow >= level)
                    {
                        Alarm(record.AlarmsWindow, record.FirstWindow, level, t, afterChange, ref pending);
                        windowStart[level] = t;
                    }
                }

                for (var c = 0; c < candidates.Length; c++)
                {
                    var said = model.Predict(candidates[c], item);
                    if (said == truth)
                    {
                        continue;
                    }

                    var step = answer == said ? 1 : answer == truth ? -1 : 0;
                    deployedCandidates[c] = Math.Max(0, deployedCandidates[c] + step);
                    for (var level = 1; level <= CandidateLevels; level++)
                    {
                        var at = (level * candidates.Length) + c;
                        candidateStats[at] = Math.Max(0, candidateStats[at] + step);
                    }
                }

                var check = new LiveCheck(item, answer, truth);
                for (var j = 0; j < alternatives; j++)
                {
                    increments[j] = itemAware.Increment(j, check);
                }

                for (var level = 1; level <= options.ItemAwareLevels; level++)
                {
                    var limit = level * options.ItemAwareStep;
                    var row = itemAwareStats.AsSpan(level * alternatives, alternatives);
                    var alarm = false;
                    for (var j = 0; j < alternatives; j++)
                    {
                        row[j] = Math.Max(0, row[j] + increments[j]);
                        alarm |= row[j] >= limit;
                    }

                    if (alarm)
                    {
                        Alarm(record.AlarmsItemAware, record.FirstItemAware, level, t, afterChange, ref pending);
                        row.Clear();
                    }
                }

                if (stableRun)
                {
                    var alarm = false;
                    for (var j = 0; j < alternatives; j++)
                    {
                        itemAwareDeployed[j] = Math.Max(0, itemAwareDeployed[j] + increments[j]);
                        alarm |= itemAwareDeployed[j] >= itemAwareDeployedLimit;
                    }

                    if (alarm)
                    {
                        record.AlarmsItemAwareDeployed++;
                        Array.Clear(itemAwareDeployed);
                    }
                }

                for (var level = 1; level <= CandidateLevels; level++)
                {
                    var row = candidateStats.AsSpan(level * candidates.Length, candidates.Length);
                    if (candidates.Length > 0 && row.IndexOfAnyExceptInRange(0, level - 1) >= 0)
                    {
                        Alarm(record.AlarmsCandidate, record.FirstCandidate, level, t, afterChange, ref pending);
                        row.Clear();
                    }
                }

                if (wrong && record.MixtureFirst == NotReached)
                {
                    var errors = prefix[t];
                    if (MixtureMonitor.Rejects(t, errors, p0, 1, 4, options.MixtureAlpha))
                    {
                        record.MixtureFirst = t;
                    }
                }

                if (trigger is not null)
                {
                    deployedCount = lattice.Step(deployedCount, wrong);
                    var candidateAlarm = candidates.Length > 0 && deployedCandidates.AsSpan().IndexOfAnyExceptInRange(0, trigger.CandidateLimit - 1) >= 0;
                    if (deployedCount >= trigger.CountLimit || candidateAlarm)
                    {
                        if (afterChange)
                        {
                            record.Refresher = Refresh(annotator, history!, index);
                            break;
                        }

                        // A false alarm before the change: the deployed charts restart, as they would after a passed refresher.
                        deployedCount = 0;
                        Array.Clear(deployedCandidates);
                    }
                }

                if (!stableRun && trigger is null && afterChange && pending == 0 && record.MixtureFirst != NotReached)
                {
                    break;
                }
            }

            record.End = t;
            record.Checks = t;
            return record;
        }

        /// <summary>Counts an alarm of one limit; the first one after the change is that limit's detection time.</summary>
        private static void Alarm(int[] alarms, int[] first, int level, int t, bool afterChange, ref int pending)
        {
            alarms[level]++;
            if (afterChange && first[level] == NotReached)
            {
                first[level] = t;
                pending--;
            }
        }

        private RefresherOutcomeRecord Refresh(LiveAnnotator annotator, List<LiveCheck> history, int index)
        {
            var before = annotator.AnswerError;
            var belief = new LiveBelief(model, lapse, release, new ForgettingRate(options.AssumedForgetting));
            foreach (var check in history)
            {
                belief.Observe(check);
            }

            var run = RefresherRun.Start(model, belief, model.Q, new RefresherSettings { TargetRuleError = targetRuleError }, seed: SeededRandom.Derive(options.Seed ^ 0xF00D, (ulong)index));
            while (!run.IsEnded)
            {
                var item = run.CurrentItem;
                var teaching = run.Phase == RefresherPhase.Teaching;
                run.Answer(annotator.Answer(item));
                if (teaching)
                {
                    annotator.SeeFeedback(item);
                }
            }

            return new RefresherOutcomeRecord(run.TaughtCount, run.Phase == RefresherPhase.Passed, before, annotator.AnswerError);
        }

        private static int[] Filled(int length)
        {
            var values = new int[length];
            Array.Fill(values, NotReached);
            return values;
        }
    }
}
