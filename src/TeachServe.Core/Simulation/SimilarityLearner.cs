using TeachServe.Core.Model;

namespace TeachServe.Core.Simulation;

/// <summary>
/// A learner that labels by similarity to what it has been shown, with attention weights over the item's
/// features: the exemplar learner of the generalized context model (Nosofsky, "Attention, similarity, and the
/// identification–categorization relationship", J. Exp. Psych.: General 115, 1986), which sums similarity to every
/// shown example, or the prototype learner (Reed, "Pattern recognition and categorization", Cognitive Psychology 3,
/// 1972), which compares with each class's mean of shown examples. Similarity is exp(−c·d) with d the
/// attention-weighted city-block distance (weights summing to 1); the label is drawn by Luce's choice rule with
/// response scaling γ: P(k) = S_k^γ / Σ S^γ (Nosofsky 1986; the γ form as in Ashby & Maddox 1993, from memory).
/// A class it has not been shown has no similarity and is not chosen; before any example it answers at random.
/// </summary>
public sealed class SimilarityLearner : ISimulatedAnnotator
{
    private readonly ModelVersion _model;
    private readonly ItemFeatures _features;
    private readonly SeededRandom _random;
    private readonly double[] _attention;
    private readonly double _lapse;
    private readonly int _labels;

    // Exemplar: per item and class, the summed similarity to the shown examples of that class.
    private readonly double[][] _evidence;

    // Prototype: per class, the sum of shown examples' features and their count.
    private readonly double[][] _sums;
    private readonly int[] _counts;
    private double? _trueError;

    /// <param name="prototype">Compare with class means (prototype learner) instead of every example (exemplar learner).</param>
    /// <param name="attention">Attention weights, one per feature column, ≥ 0, not all 0 (normalised here).</param>
    /// <param name="sensitivity">c &gt; 0: how fast similarity falls with distance.</param>
    /// <param name="responseScaling">γ &gt; 0: 1 = probability matching, larger = more deterministic.</param>
    public SimilarityLearner(ModelVersion model, ItemFeatures features, bool prototype, double[] attention, double sensitivity, double responseScaling, double lapse, SeededRandom random)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(features);
        ArgumentNullException.ThrowIfNull(attention);
        if (attention.Length != features.Dimensions || attention.Any(a => !(a >= 0)) || !(attention.Sum() > 0))
        {
            throw new ArgumentException("One non-negative attention weight per feature column, not all zero.", nameof(attention));
        }

        if (!(sensitivity > 0) || !double.IsFinite(sensitivity) || !(responseScaling > 0) || !double.IsFinite(responseScaling))
        {
            throw new ArgumentOutOfRangeException(nameof(sensitivity), "Sensitivity and response scaling must be positive and finite.");
        }

        _model = model;
        _features = features;
        _random = random;
        IsPrototype = prototype;
        var total = attention.Sum();
        _attention = [.. attention.Select(a => a / total)];
        Sensitivity = sensitivity;
        ResponseScaling = responseScaling;
        _lapse = lapse;
        _labels = model.LabelCount;
        _evidence = [.. Enumerable.Range(0, model.ItemCount).Select(_ => new double[_labels])];
        _sums = [.. Enumerable.Range(0, _labels).Select(_ => new double[features.Dimensions])];
        _counts = new int[_labels];
    }

    public bool IsPrototype { get; }

    public double Sensitivity { get; }

    public double ResponseScaling { get; }

    public IReadOnlyList<double> Attention => _attention;

    public double TrueError => _trueError ??= ComputeTrueError();

    public int Answer(int item)
    {
        if (_random.NextDouble() < _lapse)
        {
            return _random.NextInt(_labels);
        }

        Span<double> p = stackalloc double[_labels];
        Probabilities(item, p);
        return _random.Choose(p, 1.0);
    }

    public void SeeFeedback(int item)
    {
        var label = _model.TrueLabel(item);
        var x = _features.Of(item);
        _trueError = null;
        if (IsPrototype)
        {
            var sum = _sums[label];
            for (var j = 0; j < sum.Length; j++)
            {
                sum[j] += x[j];
            }

            _counts[label]++;
            return;
        }

        for (var i = 0; i < _evidence.Length; i++)
        {
            _evidence[i][label] += Math.Exp(-Sensitivity * Distance(_features.Of(i), x));
        }
    }

    /// <summary>P(label | item) of the choice rule, lapses left out.</summary>
    public void Probabilities(int item, Span<double> p)
    {
        Span<double> mean = stackalloc double[_features.Dimensions];
        var x = _features.Of(item);
        for (var k = 0; k < _labels; k++)
        {
            double s;
            if (IsPrototype)
            {
                if (_counts[k] == 0)
                {
                    s = 0;
                }
                else
                {
                    for (var j = 0; j < mean.Length; j++)
                    {
                        mean[j] = _sums[k][j] / _counts[k];
                    }

                    s = Math.Exp(-Sensitivity * Distance(x, mean));
                }
            }
            else
            {
                s = _evidence[item][k];
            }

            p[k] = s > 0 ? Math.Pow(s, ResponseScaling) : 0;
        }

        var total = 0.0;
        foreach (var v in p)
        {
            total += v;
        }

        if (!(total > 0) || !double.IsFinite(total))
        {
            // Nothing shown yet, or every similarity underflowed: no preference.
            p.Fill(1.0 / _labels);
            return;
        }

        for (var k = 0; k < _labels; k++)
        {
            p[k] /= total;
        }
    }

    private double Distance(ReadOnlySpan<double> a, ReadOnlySpan<double> b)
    {
        var d = 0.0;
        for (var j = 0; j < a.Length; j++)
        {
            d += _attention[j] * Math.Abs(a[j] - b[j]);
        }

        return d;
    }

    private double ComputeTrueError()
    {
        Span<double> p = stackalloc double[_labels];
        var error = 0.0;
        for (var i = 0; i < _model.ItemCount; i++)
        {
            Probabilities(i, p);
            error += 1 - p[_model.TrueLabel(i)];
        }

        return error / _model.ItemCount;
    }
}
