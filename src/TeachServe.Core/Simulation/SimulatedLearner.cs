using TeachServe.Core.Model;

namespace TeachServe.Core.Simulation;

/// <summary>Kinds of simulated annotator, for robustness checks of policies and the gate.</summary>
public enum LearnerVariant
{
    /// <summary>Exactly the learner the teacher assumes.</summary>
    Assumed,
    /// <summary>Learns faster than assumed (alpha doubled).</summary>
    Fast,
    /// <summary>Learns slower than assumed (alpha halved).</summary>
    Slow,
    /// <summary>Starts biased toward one wrong rule (a quarter of the prior mass on it).</summary>
    BiasedPrior,
    /// <summary>Its posterior drifts back toward the prior by a fixed rate per step.</summary>
    Forgetful,
    /// <summary>alpha → ∞: never keeps a hypothesis that was shown wrong.</summary>
    Eliminating,
    /// <summary>Never changes its first hypothesis.</summary>
    Stuck,
    /// <summary>Answers uniformly at random throughout.</summary>
    RandomAnswers,
    /// <summary>Not from H: labels by summed similarity to every shown example (generalized context model).</summary>
    Exemplar,
    /// <summary>Not from H: labels by similarity to each class's mean of shown examples.</summary>
    Prototype,
    /// <summary>Not from H: switches among oblique linear rules of its own, with their own offsets.</summary>
    ObliqueRules,
    /// <summary>Not from H: holds an ordered decision list over the item's columns, relearnt from shown examples.</summary>
    DecisionLists,
    /// <summary>Not from H: a prototype learner that attends to a random subset of the features only.</summary>
    PartialAttention,
}

/// <summary>
/// The keep-or-redraw switching learner of Singla et al. (ICML 2014) with lapses (DESIGN 2.2), and its variants.
/// It holds one hypothesis; after feedback that shows it wrong it keeps it with probability q, otherwise redraws
/// from its posterior P(·|A_t).
/// </summary>
public sealed class SimulatedLearner : ISimulatedAnnotator
{
    /// <summary>Share of the gap to the prior a <see cref="LearnerVariant.Forgetful"/> learner closes per step.</summary>
    public const double ForgetRate = 0.1;

    private readonly ModelVersion _model;
    private readonly SeededRandom _random;
    private readonly double[] _prior;
    private readonly double[] _posterior;
    private readonly double _q;
    private readonly double _lapse;

    public SimulatedLearner(ModelVersion model, LearnerVariant variant, double assumedAlpha, double lapse, double targetError, SeededRandom random)
    {
        _model = model;
        Variant = variant;
        _random = random;
        _lapse = lapse;
        var alpha = variant switch
        {
            LearnerVariant.Fast => assumedAlpha * 2,
            LearnerVariant.Slow => assumedAlpha / 2,
            LearnerVariant.Eliminating => double.PositiveInfinity,
            _ => assumedAlpha,
        };
        _q = ModelVersion.DisagreementFactor(alpha);
        _prior = model.Prior.ToArray();
        if (variant == LearnerVariant.BiasedPrior)
        {
            BiasTowardWrongRule(targetError);
        }

        _posterior = (double[])_prior.Clone();
        Hypothesis = _random.Choose(_posterior, _posterior.Sum());
    }

    public LearnerVariant Variant { get; }
    public int Hypothesis { get; private set; }

    /// <summary>Error of the rule the learner holds now; (K−1)/K for one answering at random.</summary>
    public double TrueError => Variant == LearnerVariant.RandomAnswers
        ? (double)(_model.LabelCount - 1) / _model.LabelCount
        : _model.Error[Hypothesis];

    /// <summary>The label the learner gives <paramref name="item"/> (teaching and test alike).</summary>
    public int Answer(int item)
    {
        if (Variant == LearnerVariant.RandomAnswers || _random.NextDouble() < _lapse)
        {
            return _random.NextInt(_model.LabelCount);
        }

        return _model.Predict(Hypothesis, item);
    }

    /// <summary>The learner sees the true label of a teaching item.</summary>
    public void SeeFeedback(int item)
    {
        if (Variant is LearnerVariant.Stuck or LearnerVariant.RandomAnswers)
        {
            return;
        }

        TeachingOrders.ApplyShown(_model, _posterior, item, _q);
        if (Variant == LearnerVariant.Forgetful)
        {
            var total = _posterior.Sum();
            for (var h = 0; h < _posterior.Length; h++)
            {
                _posterior[h] = ((1 - ForgetRate) * _posterior[h] / total) + (ForgetRate * _prior[h]);
            }
        }

        if (_model.Mistake(Hypothesis, item) && _random.NextDouble() >= _q)
        {
            Hypothesis = _random.Choose(_posterior, _posterior.Sum());
        }
    }

    private void BiasTowardWrongRule(double targetError)
    {
        // The most tempting wrong rule: the lowest-error hypothesis that is still clearly wrong (≥ 2× target).
        var error = _model.Error;
        var chosen = -1;
        for (var h = 0; h < error.Length; h++)
        {
            if (error[h] >= 2 * targetError && (chosen < 0 || error[h] < error[chosen]))
            {
                chosen = h;
            }
        }

        if (chosen < 0)
        {
            return;
        }

        for (var h = 0; h < _prior.Length; h++)
        {
            _prior[h] *= 0.75 / (1.0 - _model.Prior[chosen]);
        }

        _prior[chosen] = 0.25;
    }
}
