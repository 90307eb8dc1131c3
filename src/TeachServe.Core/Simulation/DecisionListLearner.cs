using TeachServe.Core.Model;

namespace TeachServe.Core.Simulation;

/// <summary>
/// A learner holding an ordered decision list (Rivest, "Learning decision lists", Machine Learning 2, 1987): up to
/// <see cref="MaxTests"/> tests "column above/below a cut → label", then a default label. It starts from a list
/// drawn at random; when feedback shows its list wrong it keeps it with probability q, else relearns a list from
/// the examples shown so far with Rivest's greedy algorithm (repeatedly take a test whose matching examples all carry
/// one label, covering the most, ties broken at random), stopping at the length limit with the majority label.
/// Tests are over the item's columns (binary attributes, or numeric features cut at quartiles).
/// </summary>
public sealed class DecisionListLearner : ISimulatedAnnotator
{
    public const int MaxTests = 3;

    /// <summary>Where candidate cuts lie along a feature: its quartiles.</summary>
    private static readonly double[] Quartiles = [0.25, 0.5, 0.75];

    private readonly ModelVersion _model;
    private readonly ItemFeatures _features;
    private readonly SeededRandom _random;
    private readonly double _q;
    private readonly double _lapse;
    private readonly (int Column, double Cut, bool Above)[] _tests;
    private readonly List<int> _shown = [];
    private List<(int Test, int Label)> _list = [];
    private int _default;
    private double? _trueError;

    public DecisionListLearner(ModelVersion model, ItemFeatures features, double alpha, double lapse, SeededRandom random)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(features);
        _model = model;
        _features = features;
        _random = random;
        _lapse = lapse;
        _q = ModelVersion.DisagreementFactor(alpha);
        _tests = [.. BuildTests(features)];
        var length = 1 + random.NextInt(MaxTests);
        for (var i = 0; i < length; i++)
        {
            _list.Add((random.NextInt(_tests.Length), random.NextInt(model.LabelCount)));
        }

        _default = random.NextInt(model.LabelCount);
    }

    /// <summary>The list held now: test index and label, then the default label.</summary>
    public IReadOnlyList<(int Test, int Label)> List => _list;

    public int Default => _default;

    public double TrueError => _trueError ??= Enumerable.Range(0, _model.ItemCount).Count(i => Classify(i) != _model.TrueLabel(i)) / (double)_model.ItemCount;

    public int Answer(int item) =>
        _random.NextDouble() < _lapse ? _random.NextInt(_model.LabelCount) : Classify(item);

    public void SeeFeedback(int item)
    {
        _shown.Add(item);
        if (Classify(item) != _model.TrueLabel(item) && _random.NextDouble() >= _q)
        {
            Relearn();
            _trueError = null;
        }
    }

    /// <summary>The list's label for an item: the first test that matches, else the default.</summary>
    public int Classify(int item)
    {
        foreach (var (test, label) in _list)
        {
            if (Matches(test, item))
            {
                return label;
            }
        }

        return _default;
    }

    private bool Matches(int test, int item)
    {
        var (column, cut, above) = _tests[test];
        var v = _features.Of(item)[column];
        return above ? v > cut : v <= cut;
    }

    private void Relearn()
    {
        var remaining = new List<int>(_shown);
        var list = new List<(int Test, int Label)>();
        while (remaining.Count > 0 && list.Count < MaxTests && remaining.Select(_model.TrueLabel).Distinct().Count() > 1)
        {
            var best = new List<(int Test, int Label)>();
            var bestCover = 0;
            for (var t = 0; t < _tests.Length; t++)
            {
                var matched = remaining.Where(i => Matches(t, i)).ToList();
                if (matched.Count == 0 || matched.Select(_model.TrueLabel).Distinct().Count() != 1)
                {
                    continue;
                }

                if (matched.Count > bestCover)
                {
                    best.Clear();
                    bestCover = matched.Count;
                }

                if (matched.Count == bestCover)
                {
                    best.Add((t, _model.TrueLabel(matched[0])));
                }
            }

            if (best.Count == 0)
            {
                break;
            }

            var chosen = best[_random.NextInt(best.Count)];
            list.Add(chosen);
            remaining.RemoveAll(i => Matches(chosen.Test, i));
        }

        _list = list;
        _default = remaining.Count == 0
            ? _model.TrueLabel(_shown[^1])
            : remaining.GroupBy(_model.TrueLabel).OrderByDescending(g => g.Count()).ThenBy(g => g.Key).First().Key;
    }

    /// <summary>Both directions of a cut at each column's quartiles (a binary column has one cut, between 0 and 1).</summary>
    private static IEnumerable<(int, double, bool)> BuildTests(ItemFeatures features)
    {
        for (var j = 0; j < features.Dimensions; j++)
        {
            var values = Enumerable.Range(0, features.Count).Select(i => features.Of(i)[j]).Order().ToArray();
            var cuts = Quartiles.Select(q => values[(int)(q * (values.Length - 1))]).Distinct().Where(c => c < values[^1]);
            foreach (var cut in cuts)
            {
                yield return (j, cut, true);
                yield return (j, cut, false);
            }
        }
    }
}
