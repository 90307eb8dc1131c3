namespace TeachServe.Core.LiveQuality;

/// <summary>
/// An item-aware CUSUM on live checks: one Page CUSUM per drift alternative j (Page, "Continuous inspection schemes",
/// Biometrika 41, 1954), each adding the log-likelihood ratio of the answer given to the item checked,
/// w_j(x, a) = ln(P_j(a | x) / P_0(a | x)), where P_0 is the answer distribution the release belief predicts for item x
/// and P_j the one alternative j predicts. S_j ← max(0, S_j + w_j(x, a)); the chart alarms when any S_j reaches
/// <see cref="Limit"/> (nats). Unlike the count CUSUM, a wrong answer to an item that a reliable annotator almost never
/// gets wrong weighs more than one to a hard item, and the label chosen counts as well as whether it is wrong.
/// </summary>
/// <remarks>
/// When every item has the same in-control error p0 and the same alternative error p1, and wrong answers are spread
/// evenly over the other labels under both, w(x, a) is ln(p1/p0) for a wrong answer and ln((1−p1)/(1−p0)) for a right
/// one on every item: exactly the count CUSUM's increments (Reynolds &amp; Stoumbos, "A CUSUM chart for monitoring a
/// proportion when inspecting continuously", J. Quality Technology 31(1), 1999). For a single alternative whose
/// per-check answer distribution is the true one after the change, Page's CUSUM is optimal in Lorden's worst-case
/// delay sense (Moustakides, "Optimal stopping times for detecting changes in distributions", Ann. Stat. 14, 1986;
/// cited from memory, the paper not in hand; likewise the Reynolds &amp; Stoumbos lattice chart, checked here only
/// through <see cref="BernoulliCusum"/>'s exact Markov chain);
/// here the increments are not identically distributed and the drifted annotator holds one rule, not the alternative's
/// mixture, so that optimality is only a guide, and the limit is set by simulation (<see cref="ItemAwareCusum.Calibrate"/>).
/// Checks on items outside the model version (gold items made up on the fly) use the item-averaged error weights.
/// </remarks>
public sealed class ItemAwareCusumDesign
{
    private readonly double[][] _weights;
    private readonly double[][] _outside;

    internal ItemAwareCusumDesign(int itemCount, int labelCount, string[] alternatives, double[][] weights, double[][] outside, double limit, ItemAwareCalibration? calibration)
    {
        ItemCount = itemCount;
        LabelCount = labelCount;
        Alternatives = alternatives;
        _weights = weights;
        _outside = outside;
        Limit = limit;
        Calibration = calibration;
    }

    public int ItemCount { get; }

    public int LabelCount { get; }

    /// <summary>The drift alternatives, one chart each.</summary>
    public IReadOnlyList<string> Alternatives { get; }

    /// <summary>The alarm limit in nats (infinite until calibrated).</summary>
    public double Limit { get; }

    /// <summary>How the limit was set, when it was set by simulation.</summary>
    public ItemAwareCalibration? Calibration { get; }

    /// <summary>
    /// A design from explicit answer distributions: <paramref name="inControl"/>[x·K + a] = P_0(a | x), and for each
    /// alternative j, P_j(a | x) in the same layout; <paramref name="trueLabels"/>[x] is item x's known label (for the
    /// item-averaged error weights of checks outside the model). Every probability must be positive (a lapse
    /// guarantees it).
    /// </summary>
    public static ItemAwareCusumDesign FromProbabilities(int labelCount, ReadOnlySpan<int> trueLabels, ReadOnlySpan<double> inControl, IReadOnlyList<(string Name, double[] Probabilities)> alternatives, double limit = double.PositiveInfinity)
    {
        ArgumentNullException.ThrowIfNull(alternatives);
        ArgumentOutOfRangeException.ThrowIfLessThan(labelCount, 2);
        if (inControl.Length == 0 || inControl.Length % labelCount != 0)
        {
            throw new ArgumentException("One probability per item and label is needed.", nameof(inControl));
        }

        if (alternatives.Count == 0)
        {
            throw new ArgumentException("At least one alternative is needed.", nameof(alternatives));
        }

        var items = inControl.Length / labelCount;
        if (trueLabels.Length != items)
        {
            throw new ArgumentException("One known label per item is needed.", nameof(trueLabels));
        }

        foreach (var label in trueLabels)
        {
            if (label < 0 || label >= labelCount)
            {
                throw new ArgumentOutOfRangeException(nameof(trueLabels), label, "A known label is outside the labels.");
            }
        }

        CheckDistributions(inControl, labelCount, nameof(inControl));
        var weights = new double[alternatives.Count][];
        var outside = new double[alternatives.Count][];
        var meanError0 = MeanError(inControl, labelCount, trueLabels);
        for (var j = 0; j < alternatives.Count; j++)
        {
            var p = alternatives[j].Probabilities;
            if (p is null || p.Length != inControl.Length)
            {
                throw new ArgumentException("Each alternative needs one probability per item and label.", nameof(alternatives));
            }

            CheckDistributions(p, labelCount, nameof(alternatives));
            weights[j] = new double[p.Length];
            for (var i = 0; i < p.Length; i++)
            {
                weights[j][i] = Math.Log(p[i] / inControl[i]);
            }

            var meanError1 = MeanError(p, labelCount, trueLabels);
            outside[j] = [Math.Log(meanError1 / meanError0), Math.Log((1 - meanError1) / (1 - meanError0))];
        }

        return new ItemAwareCusumDesign(items, labelCount, [.. alternatives.Select(a => a.Name)], weights, outside, limit, null);
    }

    /// <summary>The same weights with another limit (for sweeps over the limit).</summary>
    public ItemAwareCusumDesign WithLimit(double limit, ItemAwareCalibration? calibration = null)
    {
        if (!(limit > 0))
        {
            throw new ArgumentOutOfRangeException(nameof(limit), limit, "Must be positive.");
        }

        return new ItemAwareCusumDesign(ItemCount, LabelCount, [.. Alternatives], _weights, _outside, limit, calibration);
    }

    /// <summary>Alternative <paramref name="alternative"/>'s log-likelihood ratio for one live check.</summary>
    public double Increment(int alternative, LiveCheck check)
    {
        if (check.Item is not { } item)
        {
            return _outside[alternative][check.Wrong ? 0 : 1];
        }

        if (item < 0 || item >= ItemCount || check.Label < 0 || check.Label >= LabelCount)
        {
            throw new ArgumentOutOfRangeException(nameof(check), "Item or label outside the design.");
        }

        return _weights[alternative][(item * LabelCount) + check.Label];
    }

    /// <summary>
    /// Applies one check to the statistics (one per alternative, in nats) in place; true when any reached the limit.
    /// The caller restarts them after an alarm.
    /// </summary>
    public bool Step(Span<double> statistics, LiveCheck check)
    {
        if (statistics.Length != _weights.Length)
        {
            throw new ArgumentException("One statistic per alternative is needed.", nameof(statistics));
        }

        var alarm = false;
        for (var j = 0; j < statistics.Length; j++)
        {
            statistics[j] = Math.Max(0, statistics[j] + Increment(j, check));
            alarm |= statistics[j] >= Limit;
        }

        return alarm;
    }

    /// <summary>The largest statistic (the chart's value).</summary>
    public static double Value(ReadOnlySpan<double> statistics)
    {
        var max = 0.0;
        foreach (var s in statistics)
        {
            max = Math.Max(max, s);
        }

        return max;
    }

    /// <summary>The item-averaged probability of an answer other than the known label.</summary>
    private static double MeanError(ReadOnlySpan<double> p, int k, ReadOnlySpan<int> trueLabels)
    {
        var sum = 0.0;
        for (var x = 0; x < trueLabels.Length; x++)
        {
            sum += 1 - p[(x * k) + trueLabels[x]];
        }

        return sum / trueLabels.Length;
    }

    private static void CheckDistributions(ReadOnlySpan<double> p, int k, string name)
    {
        for (var x = 0; x < p.Length / k; x++)
        {
            var sum = 0.0;
            for (var a = 0; a < k; a++)
            {
                var v = p[(x * k) + a];
                if (!(v > 0 && v <= 1))
                {
                    throw new ArgumentException("Every answer probability must lie in (0, 1].", name);
                }

                sum += v;
            }

            if (Math.Abs(sum - 1) > 1e-9)
            {
                throw new ArgumentException("Each item's answer probabilities must sum to 1.", name);
            }
        }
    }
}
