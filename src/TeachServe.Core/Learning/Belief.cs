using System.Numerics;
using TeachServe.Core.Model;

namespace TeachServe.Core.Learning;

/// <summary>
/// TeachServe's estimate of which hypothesis an annotator holds (DESIGN 2.3): the exact forward filter of the
/// hidden Markov model formed by the stochastic switching learner of Singla et al. (ICML 2014) with lapses.
/// It keeps two vectors over hypotheses: the belief β (normalised) and the learner's own unnormalised posterior
/// Q(h|A) = P0(h)·Π_{x∈A} ℓ(h,x), which the move step needs for the redraw distribution.
/// </summary>
public sealed class Belief
{
    private readonly ModelVersion _model;
    private readonly double[] _belief;
    private readonly double[] _learner;

    // Σ_h Q(h|A), summed in hypothesis order as the move step needs it anyway; the adaptive policy reads it at
    // every step instead of summing |H| numbers again (the same sum in the same order, so the same value).
    private double _learnerTotal;

    public Belief(ModelVersion model, double q, double lapse)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(q, 0.0);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(q, 1.0);
        ArgumentOutOfRangeException.ThrowIfLessThan(lapse, 0.0);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(lapse, 1.0);
        _model = model;
        Q = q;
        Lapse = lapse;
        _belief = model.Prior.ToArray();
        _learner = model.Prior.ToArray();
        _learnerTotal = SumInOrder(_learner);
    }

    /// <summary>
    /// A belief that continues from weights β (a released annotator's live belief, say) with the learner's posterior
    /// reset to the prior: a refresher treats what onboarding taught as forgotten as far as β says, so a redraw comes
    /// from the prior updated by the refresher's own items only.
    /// </summary>
    public static Belief Continue(ModelVersion model, double q, double lapse, ReadOnlySpan<double> weights)
    {
        ArgumentNullException.ThrowIfNull(model);
        if (weights.Length != model.HypothesisCount)
        {
            throw new ArgumentException("One weight per hypothesis is needed.", nameof(weights));
        }

        var total = 0.0;
        foreach (var w in weights)
        {
            if (!(w >= 0))
            {
                throw new ArgumentOutOfRangeException(nameof(weights), w, "Weights must be non-negative numbers.");
            }

            total += w;
        }

        if (!(total > 0))
        {
            throw new ArgumentException("The weights must have positive mass.", nameof(weights));
        }

        var belief = new Belief(model, q, lapse);
        for (var h = 0; h < weights.Length; h++)
        {
            belief._belief[h] = weights[h] / total;
        }

        return belief;
    }

    private Belief(Belief other)
    {
        _model = other._model;
        Q = other.Q;
        Lapse = other.Lapse;
        _belief = (double[])other._belief.Clone();
        _learner = (double[])other._learner.Clone();
        _learnerTotal = other._learnerTotal;
    }

    public double Q { get; }
    public double Lapse { get; }
    public ModelVersion Model => _model;

    /// <summary>β(h), summing to 1.</summary>
    public ReadOnlySpan<double> Weights => _belief;

    /// <summary>The learner's unnormalised posterior Q(h|A) over the teaching items shown so far.</summary>
    public ReadOnlySpan<double> LearnerWeights => _learner;

    /// <summary>Σ_h Q(h|A) over <see cref="LearnerWeights"/>, added in hypothesis order.</summary>
    public double LearnerTotal => _learnerTotal;

    public Belief Clone() => new(this);

    /// <summary>Overwrites this belief with <paramref name="other"/>'s state, allocating nothing (same model version).</summary>
    internal void CopyFrom(Belief other)
    {
        if (other._model != _model || other.Q != Q || other.Lapse != Lapse)
        {
            throw new ArgumentException("Beliefs over different model versions or learner parameters.", nameof(other));
        }

        other._belief.CopyTo(_belief, 0);
        other._learner.CopyTo(_learner, 0);
        _learnerTotal = other._learnerTotal;
    }

    /// <summary>A teaching answer: observe the answer, then the learner sees the true label and may switch.</summary>
    /// <returns>The probability the belief gave this answer before seeing it (see <see cref="Observe"/>).</returns>
    public double Teach(int item, int answer)
    {
        var predictive = Observe(item, answer);
        Move(item);
        return predictive;
    }

    /// <summary>
    /// Step 1: β'(h) ∝ β(h)·o(a|h,x), o = (1−lapse)·1[h(x)=a] + lapse/K. A test answer applies only this step.
    /// An answer no hypothesis can explain (possible only with lapse 0) carries no usable information and is ignored.
    /// </summary>
    /// <returns>
    /// The predictive probability of the answer under the model, Σ_h β(h)·o(a|h,x): the normaliser of this step,
    /// so the product over a session's answers is the model's marginal likelihood of them (0 when ignored).
    /// </returns>
    public double Observe(int item, int answer)
    {
        var k = _model.LabelCount;
        var agree = 1.0 - Lapse + (Lapse / k);
        var disagree = Lapse / k;
        var m = _model.HypothesisCount;
        var truth = _model.TrueLabel(item);
        var row = _model.MistakeRow(item);
        var predictions = k == 2 ? default : _model.PredictionBytes.Slice(item * m, m);

        // Two labels: h agrees with the answer exactly when (h mislabels x) == (the answer is wrong), so the
        // agreeing hypotheses are one word of mistake bits, flipped or not, and the loops need no branches.
        var answerWrong = answer != truth;
        var flip = answerWrong ? 0UL : ulong.MaxValue;
        Span<double> factor = stackalloc double[2];
        var agreeMass = 0.0;
        for (var h = 0; h < m; h++)
        {
            var agrees = k == 2 ? (((row[h >> 6] ^ flip) >> (h & 63)) & 1) != 0 : predictions[h] == answer;
            agreeMass += agrees ? _belief[h] : 0.0;
        }

        var total = (agree * agreeMass) + (disagree * (1.0 - agreeMass));
        if (!(total > 0))
        {
            return 0.0;
        }

        factor[0] = disagree / total;
        factor[1] = agree / total;
        for (var h = 0; h < m; h++)
        {
            var agrees = k == 2 ? (int)(((row[h >> 6] ^ flip) >> (h & 63)) & 1) : (predictions[h] == answer ? 1 : 0);
            _belief[h] *= factor[agrees];
        }

        return total;
    }

    /// <summary>
    /// Step 2: β_t(h) = β'(h)·ℓ(h,x_t) + J·P(h|A_t), J = (1−q)·Σ_{h(x_t)≠y_t} β'(h). The learner posterior Q
    /// is updated with x_t first, since a redraw comes from P(·|A_t).
    /// </summary>
    public void Move(int item)
    {
        var row = _model.MistakeRow(item);
        var q = Q;
        var wrongMass = 0.0;
        for (var w = 0; w < row.Length; w++)
        {
            var bits = row[w];
            while (bits != 0)
            {
                var h = (w * 64) + BitOperations.TrailingZeroCount(bits);
                bits &= bits - 1;
                wrongMass += _belief[h];
                _belief[h] *= q;
                _learner[h] *= q;
            }
        }

        var jump = (1.0 - q) * wrongMass;
        var learnerTotal = SumInOrder(_learner);
        _learnerTotal = learnerTotal;
        var factor = jump / learnerTotal;
        var total = 0.0;
        for (var h = 0; h < _belief.Length; h++)
        {
            var v = _belief[h] + (factor * _learner[h]);
            _belief[h] = v;
            total += v;
        }

        // Exact arithmetic keeps the sum at 1; renormalise only to stop rounding drift over long sessions.
        Scale(1.0 / total);
    }

    /// <summary>Ê = Σ_h β(h)·err(h).</summary>
    public double PredictedError()
    {
        var error = _model.Error;
        var sum = 0.0;
        for (var h = 0; h < _belief.Length; h++)
        {
            sum += _belief[h] * error[h];
        }

        return sum;
    }

    /// <summary>C(ε) = Σ_h β(h)·1[err(h) ≤ ε].</summary>
    public double Confidence(double targetError)
    {
        var error = _model.Error;
        var sum = 0.0;
        for (var h = 0; h < _belief.Length; h++)
        {
            if (error[h] <= targetError)
            {
                sum += _belief[h];
            }
        }

        return sum;
    }

    /// <summary>The learner's own expected error E(A) = Σ_h P(h|A)·err(h).</summary>
    public double LearnerExpectedError()
    {
        var error = _model.Error;
        double weighted = 0, total = 0;
        for (var h = 0; h < _learner.Length; h++)
        {
            weighted += _learner[h] * error[h];
            total += _learner[h];
        }

        return weighted / total;
    }

    /// <summary>
    /// A plain sum from the first number to the last: the one order every caller of <see cref="LearnerTotal"/> has
    /// always used, so cached and recomputed totals agree to the last bit.
    /// </summary>
    private static double SumInOrder(ReadOnlySpan<double> values)
    {
        var total = 0.0;
        foreach (var v in values)
        {
            total += v;
        }

        return total;
    }

    private void Scale(double factor)
    {
        for (var h = 0; h < _belief.Length; h++)
        {
            _belief[h] *= factor;
        }
    }
}
