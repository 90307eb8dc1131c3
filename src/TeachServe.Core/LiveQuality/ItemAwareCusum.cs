using TeachServe.Core.Model;

namespace TeachServe.Core.LiveQuality;

/// <summary>What a drifted annotator is assumed to do, for one chart of the item-aware CUSUM.</summary>
public enum DriftAlternative
{
    /// <summary>Holds a rule drawn from the prior among the rules above target (a shortcut, or forgetting to a worse rule).</summary>
    RulesAboveTarget,
    /// <summary>Holds a rule drawn from the whole prior (forgetting everything that was taught).</summary>
    Prior,
    /// <summary>Answers uniformly at random.</summary>
    Random,
    /// <summary>Half way to a rule above target: each answer comes from the in-control view or from a rule above target, evenly.</summary>
    HalfwayAboveTarget,
    /// <summary>Holds a rule drawn from the prior among the rules above target and at most the drift rule error (the drift the project's gate is set to tell apart).</summary>
    RulesNearTarget,
}

/// <summary>How an item-aware CUSUM's limit was set by simulation.</summary>
/// <param name="TargetRunLength">The in-control ARL asked for.</param>
/// <param name="InControlRunLength">The pooled in-control ARL simulated at the chosen limit: in-control checks per alarm over all annotators, the chart restarting after each alarm (for a mixed population, the harmonic mean of their ARLs).</param>
/// <param name="StandardError">Its Monte Carlo standard error (ratio estimator over annotators, so it includes their differences).</param>
/// <param name="Annotators">Simulated in-control annotators.</param>
/// <param name="ChecksEach">Live checks of each.</param>
/// <param name="Alarms">Alarms counted at the chosen limit.</param>
/// <param name="Seed">The simulation's seed.</param>
public sealed record ItemAwareCalibration(double TargetRunLength, double InControlRunLength, double StandardError, int Annotators, int ChecksEach, int Alarms, ulong Seed);

/// <summary>Settings of the simulation that sets an item-aware CUSUM's limit.</summary>
public sealed record ItemAwareCalibrationOptions
{
    public int Annotators { get; init; } = 400;

    /// <summary>Checks per annotator, as a multiple of the in-control ARL asked for (at least 1,000 checks).</summary>
    public double HorizonPerRunLength { get; init; } = 10;

    public ulong Seed { get; init; } = 1;

    /// <summary>The limit is found to this many nats.</summary>
    public double Resolution { get; init; } = 0.01;
}

/// <summary>
/// Builds and calibrates <see cref="ItemAwareCusumDesign"/>s from a model version and the belief that describes an
/// in-control (released) annotator. With β that belief, an annotator holding rule h answers x with h(x) except with
/// probability lapse a uniformly random label, so P_0(a | x) = (1 − lapse)·Σ_h β(h)·1[h(x) = a] + lapse/K, and an
/// alternative that draws the rule from D predicts P_D(a | x) the same way with D in place of β (random answering: 1/K).
/// </summary>
public static class ItemAwareCusum
{
    /// <summary>
    /// The default alternatives: a rule between the target and the drift rule error, or random answers. Measured against
    /// <see cref="DriftAlternative.RulesAboveTarget"/> in their place (docs/live-quality.md): sooner for shortcuts, a
    /// little later for random answers.
    /// </summary>
    public static IReadOnlyList<DriftAlternative> DefaultAlternatives { get; } = [DriftAlternative.RulesNearTarget, DriftAlternative.Random];

    /// <summary>The weights (no limit yet) for an in-control annotator described by <paramref name="inControlBelief"/>.</summary>
    /// <param name="driftRuleError">The upper rule error of <see cref="DriftAlternative.RulesNearTarget"/>: the drift the gate is set to tell apart (target + delta).</param>
    public static ItemAwareCusumDesign Weights(ModelVersion model, ReadOnlySpan<double> inControlBelief, double lapse, double targetRuleError, double driftRuleError, IReadOnlyList<DriftAlternative>? alternatives = null)
    {
        ArgumentNullException.ThrowIfNull(model);
        if (inControlBelief.Length != model.HypothesisCount)
        {
            throw new ArgumentException("One weight per hypothesis is needed.", nameof(inControlBelief));
        }

        if (!(lapse > 0 && lapse <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(lapse), lapse, "Must lie in (0, 1]: with no lapse an in-control annotator could never give some answers, and their weight would be infinite.");
        }

        alternatives ??= DefaultAlternatives;
        if (alternatives.Count == 0 || alternatives.Distinct().Count() != alternatives.Count)
        {
            throw new ArgumentException("Name one or more distinct alternatives.", nameof(alternatives));
        }

        var inControl = AnswerDistribution(model, inControlBelief, lapse);
        var list = new List<(string, double[])>();
        foreach (var alternative in alternatives)
        {
            double[] p;
            switch (alternative)
            {
                case DriftAlternative.Random:
                    p = new double[inControl.Length];
                    Array.Fill(p, 1.0 / model.LabelCount);
                    break;
                case DriftAlternative.Prior:
                    p = AnswerDistribution(model, model.Prior, lapse);
                    break;
                case DriftAlternative.RulesNearTarget:
                    if (!(driftRuleError > targetRuleError))
                    {
                        throw new ArgumentOutOfRangeException(nameof(driftRuleError), driftRuleError, "Must lie above the target rule error.");
                    }

                    p = AnswerDistribution(model, AboveTarget(model, targetRuleError, driftRuleError), lapse);
                    break;
                case DriftAlternative.HalfwayAboveTarget:
                    p = AnswerDistribution(model, AboveTarget(model, targetRuleError), lapse);
                    for (var i = 0; i < p.Length; i++)
                    {
                        p[i] = 0.5 * (p[i] + inControl[i]);
                    }

                    break;
                default:
                    p = AnswerDistribution(model, AboveTarget(model, targetRuleError), lapse);
                    break;
            }

            list.Add((Name(alternative), p));
        }

        var truth = new int[model.ItemCount];
        for (var x = 0; x < truth.Length; x++)
        {
            truth[x] = model.TrueLabel(x);
        }

        return ItemAwareCusumDesign.FromProbabilities(model.LabelCount, truth, inControl, list);
    }

    /// <summary>
    /// The weights, with the smallest limit whose simulated in-control ARL reaches <paramref name="inControlRunLength"/>
    /// for in-control annotators drawn from <paramref name="inControlBelief"/> (rule h ~ β, live checks drawn uniformly
    /// from the model's items).
    /// </summary>
    public static ItemAwareCusumDesign Design(ModelVersion model, ReadOnlySpan<double> inControlBelief, double lapse, double targetRuleError, double driftRuleError, double inControlRunLength, IReadOnlyList<DriftAlternative>? alternatives = null, ItemAwareCalibrationOptions? options = null)
    {
        var weights = Weights(model, inControlBelief, lapse, targetRuleError, driftRuleError, alternatives);
        return Calibrate(weights, RuleAnnotators(model, inControlBelief, lapse), inControlRunLength, options);
    }

    /// <summary>
    /// In-control annotators for <see cref="Calibrate"/>: each draws its rule from <paramref name="belief"/> with its own
    /// random stream, then answers uniformly drawn model items with that rule, lapsing at <paramref name="lapse"/>.
    /// </summary>
    public static Func<SeededRandom, Func<LiveCheck>> RuleAnnotators(ModelVersion model, ReadOnlySpan<double> belief, double lapse)
    {
        ArgumentNullException.ThrowIfNull(model);
        var weights = belief.ToArray();
        var total = weights.Sum();
        if (!(total > 0) || weights.Any(w => !(w >= 0)))
        {
            throw new ArgumentException("The belief must be non-negative with positive mass.", nameof(belief));
        }

        return random =>
        {
            var rule = random.Choose(weights, total);
            return () =>
            {
                var item = random.NextInt(model.ItemCount);
                var label = random.NextDouble() < lapse ? random.NextInt(model.LabelCount) : model.Predict(rule, item);
                return new LiveCheck(item, label, model.TrueLabel(item));
            };
        };
    }

    /// <summary>
    /// Sets the limit by seeded simulation: <see cref="ItemAwareCalibrationOptions.Annotators"/> in-control annotators
    /// from <paramref name="annotators"/>, each followed for HorizonPerRunLength × ARL0 checks with the chart restarting
    /// after each alarm; the pooled in-control ARL (checks per alarm) is found for a limit by bisection to the given
    /// resolution, on the same simulated answers for every limit tried (common random numbers), and the smallest limit
    /// reaching <paramref name="inControlRunLength"/> is kept.
    /// </summary>
    public static ItemAwareCusumDesign Calibrate(ItemAwareCusumDesign weights, Func<SeededRandom, Func<LiveCheck>> annotators, double inControlRunLength, ItemAwareCalibrationOptions? options = null)
    {
        ArgumentNullException.ThrowIfNull(weights);
        ArgumentNullException.ThrowIfNull(annotators);
        options ??= new ItemAwareCalibrationOptions();
        if (!(inControlRunLength > 1) || double.IsInfinity(inControlRunLength))
        {
            throw new ArgumentOutOfRangeException(nameof(inControlRunLength), inControlRunLength, "Must be a finite number above 1.");
        }

        ArgumentOutOfRangeException.ThrowIfLessThan(options.Annotators, 10, nameof(options));
        var checksEach = (int)Math.Min(int.MaxValue / 2, Math.Max(1000, Math.Ceiling(options.HorizonPerRunLength * inControlRunLength)));
        var runs = Record(weights, annotators, options.Annotators, checksEach, options.Seed);

        // Bracket, then bisect. Below `low` the ARL0 falls short; at `high` it is reached.
        double low = 0, high = Math.Max(1, Math.Log(inControlRunLength));
        while (Pooled(weights, runs, high).RunLength < inControlRunLength)
        {
            low = high;
            high *= 2;
            if (high > 1e4)
            {
                throw new ArgumentOutOfRangeException(nameof(inControlRunLength), inControlRunLength, "No limit up to 10,000 nats reaches it within the simulated horizon.");
            }
        }

        while (high - low > options.Resolution)
        {
            var middle = 0.5 * (low + high);
            if (Pooled(weights, runs, middle).RunLength >= inControlRunLength)
            {
                high = middle;
            }
            else
            {
                low = middle;
            }
        }

        var at = Pooled(weights, runs, high);
        var calibration = new ItemAwareCalibration(inControlRunLength, at.RunLength, at.StandardError, options.Annotators, checksEach, at.Alarms, options.Seed);
        return weights.WithLimit(high, calibration);
    }

    /// <summary>
    /// The pooled in-control ARL of <paramref name="design"/> at its limit, with its Monte Carlo standard error, from
    /// <paramref name="count"/> fresh annotators of <paramref name="checksEach"/> checks (for checking a calibration
    /// on other random numbers).
    /// </summary>
    public static (double RunLength, double StandardError, int Alarms) SimulateRunLength(ItemAwareCusumDesign design, Func<SeededRandom, Func<LiveCheck>> annotators, int count, int checksEach, ulong seed)
    {
        ArgumentNullException.ThrowIfNull(design);
        ArgumentNullException.ThrowIfNull(annotators);
        ArgumentOutOfRangeException.ThrowIfLessThan(count, 2);
        ArgumentOutOfRangeException.ThrowIfLessThan(checksEach, 1);
        return Pooled(design, Record(design, annotators, count, checksEach, seed), design.Limit);
    }

    /// <summary>The display name of an alternative.</summary>
    public static string Name(DriftAlternative alternative) => alternative switch
    {
        DriftAlternative.RulesAboveTarget => "rules above target",
        DriftAlternative.Prior => "prior",
        DriftAlternative.HalfwayAboveTarget => "half way to rules above target",
        DriftAlternative.RulesNearTarget => "rules near target",
        _ => "random answers",
    };

    /// <summary>The prior restricted to rules above target (and at most <paramref name="upTo"/>).</summary>
    private static double[] AboveTarget(ModelVersion model, double targetRuleError, double upTo = 1)
    {
        var above = new double[model.HypothesisCount];
        for (var h = 0; h < above.Length; h++)
        {
            above[h] = model.Error[h] > targetRuleError && model.Error[h] <= upTo ? model.Prior[h] : 0;
        }

        if (!(above.Sum() > 0))
        {
            throw new ArgumentException("No rule lies above the target, so there is no worse rule to drift to.", nameof(targetRuleError));
        }

        return above;
    }

    /// <summary>P(a | x) = (1 − lapse)·Σ_h w(h)·1[h(x) = a]/Σ_h w(h) + lapse/K, laid out [x·K + a].</summary>
    internal static double[] AnswerDistribution(ModelVersion model, ReadOnlySpan<double> weights, double lapse)
    {
        var k = model.LabelCount;
        var total = 0.0;
        foreach (var w in weights)
        {
            if (!(w >= 0))
            {
                throw new ArgumentException("Weights must be non-negative.", nameof(weights));
            }

            total += w;
        }

        if (!(total > 0))
        {
            throw new ArgumentException("Weights need positive mass.", nameof(weights));
        }

        var p = new double[model.ItemCount * k];
        for (var x = 0; x < model.ItemCount; x++)
        {
            for (var h = 0; h < weights.Length; h++)
            {
                if (weights[h] > 0)
                {
                    p[(x * k) + model.Predict(h, x)] += weights[h];
                }
            }

            for (var a = 0; a < k; a++)
            {
                p[(x * k) + a] = ((1 - lapse) * p[(x * k) + a] / total) + (lapse / k);
            }
        }

        return p;
    }

    /// <summary>Each annotator's increments, per check and alternative, so that every limit tried sees the same answers.</summary>
    private static double[][] Record(ItemAwareCusumDesign weights, Func<SeededRandom, Func<LiveCheck>> annotators, int count, int checksEach, ulong seed)
    {
        var alternatives = weights.Alternatives.Count;
        var runs = new double[count][];
        for (var i = 0; i < count; i++)
        {
            var random = new SeededRandom(SeededRandom.Derive(seed, (ulong)i));
            var next = annotators(random);
            var row = new double[checksEach * alternatives];
            for (var t = 0; t < checksEach; t++)
            {
                var check = next();
                for (var j = 0; j < alternatives; j++)
                {
                    row[(t * alternatives) + j] = weights.Increment(j, check);
                }
            }

            runs[i] = row;
        }

        return runs;
    }

    private static (double RunLength, double StandardError, int Alarms) Pooled(ItemAwareCusumDesign weights, double[][] runs, double limit)
    {
        var alternatives = weights.Alternatives.Count;
        var statistics = new double[alternatives];
        var perAnnotator = new int[runs.Length];
        long checks = 0;
        for (var i = 0; i < runs.Length; i++)
        {
            Array.Clear(statistics);
            var row = runs[i];
            var n = row.Length / alternatives;
            checks += n;
            for (var t = 0; t < n; t++)
            {
                var alarm = false;
                for (var j = 0; j < alternatives; j++)
                {
                    var s = Math.Max(0, statistics[j] + row[(t * alternatives) + j]);
                    statistics[j] = s;
                    alarm |= s >= limit;
                }

                if (alarm)
                {
                    perAnnotator[i]++;
                    Array.Clear(statistics);
                }
            }
        }

        var alarms = perAnnotator.Sum();
        if (alarms == 0)
        {
            return (double.PositiveInfinity, double.NaN, 0);
        }

        // Ratio estimator R = Σ checks / Σ alarms over annotators with equal checks each: by the delta method its
        // standard error is R·sd(alarms per annotator)/(mean alarms·√n).
        var mean = (double)alarms / runs.Length;
        var variance = perAnnotator.Sum(a => (a - mean) * (a - mean)) / (runs.Length - 1);
        var ratio = checks / (double)alarms;
        return (ratio, ratio * Math.Sqrt(variance) / (mean * Math.Sqrt(runs.Length)), alarms);
    }
}
