using TeachServe.Core.Model;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// The model view after release: the session's belief continued in live mode, where nothing is shown, so each live check
/// applies only the observe step of DESIGN 2.3, β'(h) ∝ β(h)·o(a|h,x) with o = (1−lapse)·1[h(x)=a] + lapse/K, preceded by
/// a forgetting step β ← keep·β + (1 − keep)·P0: a hidden Markov model in which the annotator falls back to a rule drawn
/// from the prior (in the spirit of the memory models of Zhou, Nelakurthi &amp; He, "Unlearn what you have learned:
/// adaptive crowd teaching with exponentially decayed memory learners", KDD 2018, and Hunziker et al., "Teaching
/// multiple concepts to a forgetful learner", NeurIPS 2019, whose learners lose what they were taught over time). With
/// no forgetting it is exactly the test-mode belief (<see cref="Learning.Belief.Observe"/> alone).
/// </summary>
public sealed class LiveBelief
{
    private readonly ModelVersion _model;
    private readonly double[] _weights;
    private readonly double[] _prior;

    public LiveBelief(ModelVersion model, double lapse, ReadOnlySpan<double> releaseWeights, ForgettingRate rate)
    {
        ArgumentNullException.ThrowIfNull(model);
        if (!(lapse >= 0 && lapse <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(lapse), lapse, "Must lie in [0, 1].");
        }

        if (releaseWeights.Length != model.HypothesisCount)
        {
            throw new ArgumentException("One weight per hypothesis is needed.", nameof(releaseWeights));
        }

        _model = model;
        Lapse = lapse;
        Rate = rate;
        _weights = releaseWeights.ToArray();
        var total = _weights.Sum();
        if (!(total > 0) || _weights.Any(w => !(w >= 0)))
        {
            throw new ArgumentException("The weights must be non-negative with positive mass.", nameof(releaseWeights));
        }

        for (var h = 0; h < _weights.Length; h++)
        {
            _weights[h] /= total;
        }

        _prior = model.Prior.ToArray();
    }

    public ModelVersion Model => _model;
    public double Lapse { get; }
    public ForgettingRate Rate { get; }

    /// <summary>β(h), summing to 1.</summary>
    public ReadOnlySpan<double> Weights => _weights;

    /// <summary>Live checks observed.</summary>
    public int Checks { get; private set; }

    /// <summary>
    /// A belief saved from <see cref="Weights"/>, taken back bit for bit (not normalised again), so that continuing it
    /// gives exactly the numbers of a belief that was never saved: a server may store it between batches or rebuild it
    /// from the log, interchangeably.
    /// </summary>
    public static LiveBelief Restore(ModelVersion model, double lapse, ReadOnlySpan<double> weights, ForgettingRate rate, int checks = 0)
    {
        var belief = new LiveBelief(model, lapse, weights, rate) { Checks = checks };
        weights.CopyTo(belief._weights);
        return belief;
    }

    public LiveBelief Clone()
    {
        var copy = new LiveBelief(_model, Lapse, _weights, Rate) { Checks = Checks };
        return copy;
    }

    /// <summary>
    /// One live check: forget over the time since the previous check, then observe the answer when the item is one of the
    /// model's. Returns the predictive probability of the answer, Σ_h β(h)·o(a|h,x) after forgetting (NaN for an item
    /// outside the model, which only forgets).
    /// </summary>
    public double Observe(LiveCheck check)
    {
        Forget(Rate.Keep(check.ElapsedDays));
        Checks++;
        if (check.Item is not { } item)
        {
            return double.NaN;
        }

        if (item < 0 || item >= _model.ItemCount || check.Label < 0 || check.Label >= _model.LabelCount)
        {
            throw new ArgumentOutOfRangeException(nameof(check), "Item or label outside the model version.");
        }

        var k = _model.LabelCount;
        var agree = 1 - Lapse + (Lapse / k);
        var disagree = Lapse / k;
        var total = 0.0;
        for (var h = 0; h < _weights.Length; h++)
        {
            var o = _model.Predict(h, item) == check.Label ? agree : disagree;
            _weights[h] *= o;
            total += _weights[h];
        }

        if (!(total > 0))
        {
            // Only possible with lapse 0 and an answer no rule gives: it carries no usable information.
            throw new InvalidOperationException("No hypothesis explains the answer (lapse 0); use a positive lapse.");
        }

        for (var h = 0; h < _weights.Length; h++)
        {
            _weights[h] /= total;
        }

        return total;
    }

    /// <summary>β ← keep·β + (1 − keep)·P0.</summary>
    public void Forget(double keep)
    {
        if (!(keep >= 0 && keep <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(keep), keep, "Must lie in [0, 1].");
        }

        if (keep == 1)
        {
            return;
        }

        for (var h = 0; h < _weights.Length; h++)
        {
            _weights[h] = (keep * _weights[h]) + ((1 - keep) * _prior[h]);
        }
    }

    /// <summary>Σ_h β(h)·err(h): the expected rule error.</summary>
    public double PredictedRuleError()
    {
        var error = _model.Error;
        var sum = 0.0;
        for (var h = 0; h < _weights.Length; h++)
        {
            sum += _weights[h] * error[h];
        }

        return sum;
    }

    /// <summary>
    /// The predicted share of live checks answered wrong, (1 − lapse)·Σ_h β(h)·err(h) + lapse·(K−1)/K: the quantity the
    /// count monitors watch (<see cref="LiveMonitorSettings"/>), so both views report the same error.
    /// </summary>
    public double PredictedAnswerError() => GateDesign.AnswerError(PredictedRuleError(), Lapse, _model.LabelCount);

    /// <summary>P(the annotator's rule gets <paramref name="item"/> wrong) = Σ_h β(h)·1[h(x) ≠ y(x)].</summary>
    public double MistakeProbability(int item)
    {
        var sum = 0.0;
        for (var h = 0; h < _weights.Length; h++)
        {
            if (_model.Mistake(h, item))
            {
                sum += _weights[h];
            }
        }

        return sum;
    }

    /// <summary>
    /// The likeliest confusions: for each pair (known label, label given), the expected share of the model's items of
    /// that known label that the annotator's rule labels as the other, Σ_h β(h)·|{x: y(x) = t, h(x) = g}|/|{x: y(x) = t}|;
    /// the <paramref name="top"/> largest, largest first.
    /// </summary>
    public IReadOnlyList<LikelyConfusion> LikelyConfusions(int top = 3)
    {
        var k = _model.LabelCount;
        var mass = new double[k * k];
        var perLabel = new int[k];
        for (var item = 0; item < _model.ItemCount; item++)
        {
            var truth = _model.TrueLabel(item);
            perLabel[truth]++;
            for (var h = 0; h < _weights.Length; h++)
            {
                if (_weights[h] > 0 && _model.Mistake(h, item))
                {
                    mass[(truth * k) + _model.Predict(h, item)] += _weights[h];
                }
            }
        }

        var result = new List<LikelyConfusion>();
        for (var t = 0; t < k; t++)
        {
            for (var g = 0; g < k; g++)
            {
                if (t != g && perLabel[t] > 0)
                {
                    result.Add(new LikelyConfusion(t, g, mass[(t * k) + g] / perLabel[t]));
                }
            }
        }

        return [.. result.OrderByDescending(c => c.Rate).ThenBy(c => c.TrueLabel).ThenBy(c => c.GivenLabel).Take(top)];
    }
}

/// <summary>The expected share of items of label <paramref name="TrueLabel"/> that the annotator labels <paramref name="GivenLabel"/>.</summary>
public readonly record struct LikelyConfusion(int TrueLabel, int GivenLabel, double Rate);
