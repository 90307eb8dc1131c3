using TeachServe.Core.LiveQuality;
using TeachServe.Core.Model;
using TeachServe.Core.Tests.Engine;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

/// <summary>
/// The item-aware CUSUM: Page's CUSUM of per-answer log-likelihood ratios (Page, "Continuous inspection schemes",
/// Biometrika 41, 1954), which reduces to the Bernoulli count CUSUM of Reynolds &amp; Stoumbos (J. Quality Technology
/// 31(1), 1999) when every item is alike, and whose limit is set by seeded simulation. Both papers are cited
/// `from memory` (not in hand); every expected value here is derived or computed by the exact Markov chain.
/// </summary>
public sealed class ItemAwareCusumTests
{
    private static readonly ModelVersion Model = TinyModels.Random(seed: 5, m: 24, teach: 30, test: 10, labels: 3, alpha: 1.0, lapse: 0.1);

    /// <summary>Every item alike: known label with 1 − p, each other label p/(K−1); labels cycle over the items.</summary>
    private static (int[] Truth, double[] P) Homogeneous(int items, int k, double p)
    {
        var truth = new int[items];
        var table = new double[items * k];
        for (var x = 0; x < items; x++)
        {
            truth[x] = x % k;
            for (var a = 0; a < k; a++)
            {
                table[(x * k) + a] = a == truth[x] ? 1 - p : p / (k - 1);
            }
        }

        return (truth, table);
    }

    /// <summary>An in-control annotator who answers every item wrong with probability p (uniformly among other labels).</summary>
    private static Func<SeededRandom, Func<LiveCheck>> Homogeneous(int[] truth, int k, double p) => random => () =>
    {
        var item = random.NextInt(truth.Length);
        var label = random.NextDouble() < p ? (truth[item] + 1 + random.NextInt(k - 1)) % k : truth[item];
        return new LiveCheck(item, label, truth[item]);
    };

    // Derived (no outside source needed): with P_0(a|x) = 1 − p0 for the known label and p0/(K−1) for each other, and
    // P_1 likewise with p1, ln(P_1/P_0) is ln(p1/p0) for every wrong answer and ln((1−p1)/(1−p0)) for every right one,
    // on every item: the count CUSUM's increments in nats, Up·Unit and −Down·Unit.
    [Theory]
    [InlineData(2, 0.10, 0.30)]
    [InlineData(3, 0.1675, 0.3575)]
    [InlineData(4, 0.05, 0.25)]
    public void With_every_item_alike_it_is_the_count_cusum(int k, double p0, double p1)
    {
        var count = BernoulliCusum.Design(p0, p1, 300);
        var (truth, inControl) = Homogeneous(12, k, p0);
        var (_, drift) = Homogeneous(12, k, count.DriftError);
        var design = ItemAwareCusumDesign.FromProbabilities(k, truth, inControl, [("drift", drift)], (count.Limit - 0.5) * count.Unit);

        var random = new SeededRandom(11);
        var statistics = new double[1];
        int lattice = 0, alarms = 0;
        for (var t = 0; t < 5000; t++)
        {
            var item = random.NextInt(truth.Length);
            var wrong = random.NextDouble() < 0.3;
            var label = wrong ? (truth[item] + 1 + random.NextInt(k - 1)) % k : truth[item];
            var check = new LiveCheck(item, label, truth[item]);
            Assert.Equal(wrong ? count.Up * count.Unit : -count.Down * count.Unit, design.Increment(0, check), 12);

            var alarm = design.Step(statistics, check);
            lattice = count.Step(lattice, wrong);
            Assert.Equal(count.Alarms(lattice), alarm);
            Assert.Equal(lattice * count.Unit, statistics[0], 9);
            if (alarm)
            {
                alarms++;
                lattice = 0;
                statistics[0] = 0;
            }
        }

        Assert.True(alarms > 10, "the comparison covered alarms");

        // A gold item outside the model uses the item-averaged weights, here the same.
        Assert.Equal(count.Up * count.Unit, design.Increment(0, new LiveCheck(null, 1, 0)), 12);
    }

    [Fact]
    public void Items_that_differ_in_difficulty_weigh_a_wrong_answer_differently()
    {
        var release = InTarget(out var target);
        var design = ItemAwareCusum.Weights(Model, release, 0.1, target, Drift(target), [DriftAlternative.RulesAboveTarget, DriftAlternative.Random]);
        var inControl = ItemAwareCusum.AnswerDistribution(Model, release, 0.1);
        var wrongWeights = new List<double>();
        for (var x = 0; x < Model.ItemCount; x++)
        {
            var truth = Model.TrueLabel(x);
            var label = (truth + 1) % Model.LabelCount;
            var weight = design.Increment(0, new LiveCheck(x, label, truth));
            wrongWeights.Add(weight);

            // w = ln(P_above(a|x)/P_0(a|x)), from the two answer tables.
            var above = Model.Error.ToArray().Select((e, h) => e > target ? Model.Prior[h] : 0).ToArray();
            var alternative = ItemAwareCusum.AnswerDistribution(Model, above, 0.1);
            Assert.Equal(Math.Log(alternative[(x * 3) + label] / inControl[(x * 3) + label]), weight, 12);
        }

        Assert.True(wrongWeights.Max() - wrongWeights.Min() > 0.5, "plain and hard items weigh differently");
        // Random answering predicts 1/K for every label: w = ln((1/3)/P_0(a|x)).
        Assert.Equal(-Math.Log(3 * inControl[0]), design.Increment(1, new LiveCheck(0, 0, Model.TrueLabel(0))), 12);
    }

    [Fact]
    public void On_identical_increments_the_calibration_finds_the_exact_markov_chain_limit()
    {
        // Down = 1 lattice, so adjacent limits differ enough in ARL for the simulation to tell them apart.
        const double p0 = 0.1, p1 = 0.3;
        var exact = BernoulliCusum.WithLimit(p0, p1, 14, maxDown: 1);
        var below = BernoulliCusum.WithLimit(p0, p1, 13, maxDown: 1);
        var target = Math.Sqrt(exact.InControlRunLength * below.InControlRunLength);
        Assert.True(exact.InControlRunLength / below.InControlRunLength > 1.1);

        var (truth, inControl) = Homogeneous(10, 2, p0);
        var (_, drift) = Homogeneous(10, 2, exact.DriftError);
        var weights = ItemAwareCusumDesign.FromProbabilities(2, truth, inControl, [("drift", drift)]);
        var calibrated = ItemAwareCusum.Calibrate(weights, Homogeneous(truth, 2, p0), target, new ItemAwareCalibrationOptions { Annotators = 400, Seed = 3 });

        // The calibrated chart is the lattice chart with limit 14 (any limit in (13, 14] lattice units alarms alike).
        Assert.Equal(14, (int)Math.Ceiling(calibrated.Limit / exact.Unit));
        var c = calibrated.Calibration!;
        Assert.True(c.InControlRunLength >= target);

        // Its simulated ARL0 agrees with the exact Markov-chain ARL (Brook & Evans 1972) within 4 standard errors plus
        // the censoring of each annotator's last run (at most about ARL/checks each, derived).
        var tolerance = (4 * c.StandardError) + (exact.InControlRunLength * exact.InControlRunLength / c.ChecksEach);
        Assert.InRange(c.InControlRunLength, exact.InControlRunLength - tolerance, exact.InControlRunLength + tolerance);

        // And on fresh random numbers.
        var fresh = ItemAwareCusum.SimulateRunLength(calibrated, Homogeneous(truth, 2, p0), 400, c.ChecksEach, seed: 99);
        var freshTolerance = (4 * fresh.StandardError) + (exact.InControlRunLength * exact.InControlRunLength / c.ChecksEach);
        Assert.InRange(fresh.RunLength, exact.InControlRunLength - freshTolerance, exact.InControlRunLength + freshTolerance);
    }

    [Fact]
    public void Calibrated_run_length_holds_on_fresh_in_control_annotators_within_its_stated_error()
    {
        var release = InTarget(out var target);
        var design = ItemAwareCusum.Design(Model, release, 0.1, target, Drift(target), 200, options: new ItemAwareCalibrationOptions { Annotators = 300, Seed = 5 });
        var c = design.Calibration!;
        Assert.Equal(200, c.TargetRunLength);
        Assert.True(c.InControlRunLength >= 200);

        // Fine resolution: the chosen limit is the smallest that reaches the target, so it does not overshoot much.
        Assert.True(c.InControlRunLength < 200 * 1.1, $"{c.InControlRunLength}");
        Assert.True(c.StandardError > 0 && c.StandardError < 0.1 * c.InControlRunLength, $"{c.StandardError}");

        var fresh = ItemAwareCusum.SimulateRunLength(design, ItemAwareCusum.RuleAnnotators(Model, release, 0.1), 300, c.ChecksEach, seed: 77);
        var combined = Math.Sqrt((c.StandardError * c.StandardError) + (fresh.StandardError * fresh.StandardError));
        Assert.InRange(fresh.RunLength, c.InControlRunLength - (4 * combined), c.InControlRunLength + (4 * combined));

        // The same seed gives the same limit (reproducible), another seed a limit close by.
        var again = ItemAwareCusum.Design(Model, release, 0.1, target, Drift(target), 200, options: new ItemAwareCalibrationOptions { Annotators = 300, Seed = 5 });
        Assert.Equal(design.Limit, again.Limit);
    }

    [Fact]
    public void Random_answers_are_caught_sooner_than_by_the_count_cusum_at_the_same_simulated_false_alarm_rate()
    {
        // A plain check that the item weighting carries information: the count CUSUM's increments (every item alike)
        // against the item-aware ones, both calibrated by the same simulation, then run on the same random answerers.
        var release = InTarget(out var target);
        var annotators = ItemAwareCusum.RuleAnnotators(Model, release, 0.1);
        var options = new ItemAwareCalibrationOptions { Annotators = 200, Seed = 9 };
        var itemAware = ItemAwareCusum.Calibrate(ItemAwareCusum.Weights(Model, release, 0.1, target, Drift(target), [DriftAlternative.Random]), annotators, 300, options);

        var inControl = ItemAwareCusum.AnswerDistribution(Model, release, 0.1);
        var p0 = Enumerable.Range(0, Model.ItemCount).Average(x => 1 - inControl[(x * 3) + Model.TrueLabel(x)]);
        var (truth, flat) = Homogeneous(Model.ItemCount, 3, p0);
        var (_, randomTable) = Homogeneous(Model.ItemCount, 3, 2.0 / 3);
        var labels = Enumerable.Range(0, Model.ItemCount).Select(Model.TrueLabel).ToArray();
        var countLike = ItemAwareCusum.Calibrate(ItemAwareCusumDesign.FromProbabilities(3, labels, Relabel(flat, truth, labels), [("random", randomTable)]), annotators, 300, options);

        double Delay(ItemAwareCusumDesign d)
        {
            var total = 0;
            for (var i = 0; i < 300; i++)
            {
                var random = new SeededRandom(SeededRandom.Derive(1234, (ulong)i));
                var s = new double[1];
                var t = 0;
                do
                {
                    var item = random.NextInt(Model.ItemCount);
                    t++;
                    if (d.Step(s, new LiveCheck(item, random.NextInt(3), Model.TrueLabel(item))))
                    {
                        break;
                    }
                }
                while (t < 10_000);
                total += t;
            }

            return total / 300.0;
        }

        Assert.True(Delay(itemAware) < Delay(countLike), $"{Delay(itemAware)} vs {Delay(countLike)}");
    }

    [Fact]
    public void Monitor_raises_an_item_aware_alarm_restarts_it_and_keeps_it_in_the_state_bytes()
    {
        var release = InTarget(out var target);
        var design = ItemAwareCusum.Design(Model, release, 0.1, target, Drift(target), 200, options: new ItemAwareCalibrationOptions { Annotators = 100 });
        var monitor = new LiveMonitor(new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.15, 0.35, 100_000, maxDown: 1), ItemAware = design }, Model);
        var state = monitor.Start();
        Assert.Equal(2, state.ItemAwareStatistics.Count);

        var random = new SeededRandom(4);
        LiveStep step;
        var steps = 0;
        do
        {
            var item = random.NextInt(Model.ItemCount);
            step = monitor.Apply(state, new LiveCheck(item, random.NextInt(3), Model.TrueLabel(item)));
            var restored = LiveMonitorState.FromBytes(step.State.ToBytes());
            Assert.Equal(step.State, restored);
            Assert.Equal(step.State.ItemAwareStatistics, restored.ItemAwareStatistics);
            state = step.State;
            steps++;
        }
        while (step.Alarms == LiveAlarms.None && steps < 1000);

        Assert.Equal(LiveAlarms.ItemAware, step.Alarms);
        Assert.Equal(LiveStatus.RefresherDue, state.Status);
        Assert.All(state.ItemAwareStatistics, s => Assert.Equal(0, s));

        // Without the item-aware chart the state keeps the first format's bytes, and those still read.
        var plain = new LiveMonitor(new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.15, 0.35, 100) }).Start();
        Assert.Equal(1, plain.ToBytes()[0]);
        Assert.Empty(LiveMonitorState.FromBytes(plain.ToBytes()).ItemAwareStatistics);
        var bytes = state.ToBytes();
        Assert.Equal(2, bytes[0]);
        Assert.Throws<FormatException>(() => LiveMonitorState.FromBytes(bytes.AsSpan(0, bytes.Length - 3)));

        // A design for another model version is refused.
        Assert.Throws<ArgumentException>(() => new LiveMonitor(new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.15, 0.35, 100), ItemAware = design }, TinyModels.Thresholds(8, 5, alpha: 2.0, lapse: 0.02)));
        Assert.Throws<ArgumentOutOfRangeException>(() => new LiveMonitor(new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.15, 0.35, 100), ItemAware = ItemAwareCusum.Weights(Model, release, 0.1, target, Drift(target), [DriftAlternative.RulesAboveTarget, DriftAlternative.Random]) }, Model));
    }

    /// <summary>A drift rule error between the target and the worst rule.</summary>
    private static double Drift(double target) => 0.5 * (target + Model.Error.ToArray().Max());

    /// <summary>The released population: the prior restricted to rules within a target between the best and the median rule.</summary>
    private static double[] InTarget(out double target)
    {
        var errors = Model.Error.ToArray();
        var sorted = errors.Order().ToArray();
        target = sorted[sorted.Length / 4];
        var t = target;
        return [.. errors.Select((e, h) => e <= t ? Model.Prior[h] : 0)];
    }

    /// <summary>The homogeneous table laid out for other known labels (same p, known label moved).</summary>
    private static double[] Relabel(double[] table, int[] from, int[] to)
    {
        var k = table.Length / from.Length;
        var result = new double[table.Length];
        for (var x = 0; x < from.Length; x++)
        {
            var right = table[(x * k) + from[x]];
            var wrong = table[(x * k) + ((from[x] + 1) % k)];
            for (var a = 0; a < k; a++)
            {
                result[(x * k) + a] = a == to[x] ? right : wrong;
            }
        }

        return result;
    }
}
