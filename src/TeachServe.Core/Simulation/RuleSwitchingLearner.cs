using TeachServe.Core.Model;

namespace TeachServe.Core.Simulation;

/// <summary>
/// A keep-or-redraw switching learner (the learning rule of Singla et al., ICML 2014) over rules of its *own*
/// family, given as their labels for every item: it holds one rule, answers with it (or at random with the lapse
/// rate), and when feedback shows it wrong keeps it with probability q = 1/(1 + e^alpha), else redraws from its
/// posterior over its own rules. The teacher never sees these rules; only the answers.
/// </summary>
public sealed class RuleSwitchingLearner : ISimulatedAnnotator
{
    private readonly ModelVersion _model;
    private readonly byte[][] _rules;
    private readonly double[] _posterior;
    private readonly double[] _error;
    private readonly double _q;
    private readonly double _lapse;
    private readonly SeededRandom _random;

    /// <param name="rules">Each rule's label for every item of the model version (model order).</param>
    public RuleSwitchingLearner(ModelVersion model, byte[][] rules, double alpha, double lapse, SeededRandom random)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(rules);
        if (rules.Length == 0 || rules.Any(r => r.Length != model.ItemCount))
        {
            throw new ArgumentException("At least one rule, each with a label for every item.", nameof(rules));
        }

        _model = model;
        _rules = rules;
        _random = random;
        _lapse = lapse;
        _q = ModelVersion.DisagreementFactor(alpha);
        _posterior = [.. Enumerable.Repeat(1.0 / rules.Length, rules.Length)];
        _error = [.. rules.Select(r => Enumerable.Range(0, model.ItemCount).Count(i => r[i] != model.TrueLabel(i)) / (double)model.ItemCount)];
        Rule = _random.Choose(_posterior, 1.0);
    }

    /// <summary>Index of the rule held now.</summary>
    public int Rule { get; private set; }

    public double TrueError => _error[Rule];

    /// <summary>The error of each of its rules.</summary>
    public IReadOnlyList<double> RuleErrors => _error;

    public int Answer(int item) =>
        _random.NextDouble() < _lapse ? _random.NextInt(_model.LabelCount) : _rules[Rule][item];

    public void SeeFeedback(int item)
    {
        var truth = _model.TrueLabel(item);
        var total = 0.0;
        for (var r = 0; r < _rules.Length; r++)
        {
            if (_rules[r][item] != truth)
            {
                _posterior[r] *= _q;
            }

            total += _posterior[r];
        }

        for (var r = 0; r < _rules.Length; r++)
        {
            _posterior[r] /= total;
        }

        if (_rules[Rule][item] != truth && _random.NextDouble() >= _q)
        {
            Rule = _random.Choose(_posterior, 1.0);
        }
    }
}
