using TeachServe.Core.Model;

namespace TeachServe.Core.LiveQuality;

/// <summary>How a simulated annotator behaves after release (the study's scenarios).</summary>
public enum LiveBehaviour
{
    /// <summary>Keeps the rule it was released with.</summary>
    Stable,
    /// <summary>From the change point, falls back each check with a fixed probability to a rule drawn from the prior.</summary>
    Forgetting,
    /// <summary>At the change point switches to one tempting wrong rule (drawn by prior mass among rules above target).</summary>
    Shortcut,
    /// <summary>From the change point answers uniformly at random.</summary>
    Random,
}

/// <summary>
/// A simulated released annotator: the switching learner of DESIGN 2.2 holding one rule and lapsing at the project's
/// rate, plus the post-release behaviours of <see cref="LiveBehaviour"/>. When a refresher teaches it, it keeps or
/// redraws as in onboarding, redrawing from the prior updated by the refresher's items (what onboarding taught is
/// taken as forgotten, as <see cref="Learning.Belief.Continue"/> assumes).
/// </summary>
internal sealed class LiveAnnotator
{
    private readonly ModelVersion _model;
    private readonly double _lapse;
    private readonly double _q;
    private readonly double[] _posterior;
    private SeededRandom _random;

    public LiveAnnotator(ModelVersion model, int hypothesis, double lapse, double q, SeededRandom random)
    {
        _model = model;
        Hypothesis = hypothesis;
        _lapse = lapse;
        _q = q;
        _random = random;
        _posterior = model.Prior.ToArray();
    }

    public int Hypothesis { get; private set; }
    public bool Guessing { get; private set; }

    /// <summary>Probability of a wrong answer on a uniformly drawn model item.</summary>
    public double AnswerError => Guessing
        ? (_model.LabelCount - 1.0) / _model.LabelCount
        : Teaching.GateDesign.AnswerError(_model.Error[Hypothesis], _lapse, _model.LabelCount);

    public int Answer(int item) =>
        Guessing || _random.NextDouble() < _lapse ? _random.NextInt(_model.LabelCount) : _model.Predict(Hypothesis, item);

    public void SwitchTo(int hypothesis)
    {
        Hypothesis = hypothesis;
        Guessing = false;
    }

    public void StartGuessing() => Guessing = true;

    /// <summary>Draws from another stream from now on (the study shares the pre-change stream between scenarios).</summary>
    public void UseRandom(SeededRandom random) => _random = random;

    /// <summary>Falls back to a rule drawn from the prior.</summary>
    public void Forget() => Hypothesis = _random.Choose(_model.Prior, 1.0);

    /// <summary>A refresher shows the true label of <paramref name="item"/>.</summary>
    public void SeeFeedback(int item)
    {
        TeachingOrders.ApplyShown(_model, _posterior, item, _q);
        // A random clicker is not reached by teaching: it keeps clicking, and the refresher's check should fail it.
        if (!Guessing && _model.Mistake(Hypothesis, item) && _random.NextDouble() >= _q)
        {
            Hypothesis = _random.Choose(_posterior, _posterior.Sum());
        }
    }
}
