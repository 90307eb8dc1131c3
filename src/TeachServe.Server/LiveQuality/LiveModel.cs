using TeachServe.Core.LiveQuality;
using TeachServe.Server.Versions;

namespace TeachServe.Server.LiveQuality;

/// <summary>
/// What the live views need of one model version: its monitor, and the translation of stored outcomes (item ids and
/// label names) into the engine's indices. An item outside the model (a gold item carried inline) has no index: the
/// count chart reads it, the model view only forgets over it.
/// </summary>
public sealed class LiveModel
{
    private readonly Dictionary<string, int> _items;

    public LiveModel(CompiledVersion version, LiveMonitor monitor)
    {
        Version = version;
        Monitor = monitor;
        _items = new Dictionary<string, int>(version.Model.ItemCount, StringComparer.Ordinal);
        for (var i = 0; i < version.Model.ItemCount; i++) _items[version.Model.ItemIds[i]] = i;
    }

    public CompiledVersion Version { get; }
    public LiveMonitor Monitor { get; }

    /// <summary>The outcome as the engine reads it; labels the version does not know count only as right or wrong.</summary>
    public LiveCheck Check(LiveCheckRecord row)
    {
        var labels = Version.LabelIndex;
        if (labels.TryGetValue(row.Label, out var label) && labels.TryGetValue(row.KnownLabel, out var known))
            return new LiveCheck(_items.TryGetValue(row.ItemId, out var item) ? item : null, label, known);
        return new LiveCheck(null, row.Wrong ? 1 : 0, 0);
    }

    /// <summary>
    /// The model view's signal for the status: its predicted answer error when the belief also holds it more likely than
    /// not that the annotator's rule errs above the gate's target (Σ_h β(h)·1[err(h) > ε] ≥ 1/2), otherwise null. The
    /// mean alone is moved by one slip: a single wrong answer multiplies the weight of every rule that gives it by
    /// (1 − lapse + lapse/K)/(lapse/K), about 39 at lapse 0.05, and the far rules that forgetting keeps alive then lift the
    /// mean above target for one check (measured in the server tests: a stable annotator flapped reliable → watch →
    /// reliable on single slips). Majority mass needs the answers to keep pointing at worse rules.
    /// </summary>
    public static double? Signal(double predictedAnswerError, double risk, double targetAnswerError) =>
        predictedAnswerError > targetAnswerError && risk >= 0.5 ? predictedAnswerError : null;

    /// <summary>Σ_h β(h)·1[err(h) > ε]: how likely the belief holds it that the annotator's rule errs above the gate's target.</summary>
    public double Risk(LiveBelief belief)
    {
        var error = Version.Model.Error;
        var weights = belief.Weights;
        var target = Version.Settings.Gate.TargetError;
        var sum = 0.0;
        for (var h = 0; h < weights.Length; h++)
        {
            if (error[h] > target) sum += weights[h];
        }
        return sum;
    }

    /// <summary>
    /// A rule in words: the share of the version's items it labels wrong and its commonest confusion, e.g.
    /// "rule 12: wrong on 30 % of the items, mostly 'sound' labelled 'defect'".
    /// </summary>
    public string Describe(int rule)
    {
        var model = Version.Model;
        var k = model.LabelCount;
        var confusions = new int[k * k];
        for (var item = 0; item < model.ItemCount; item++)
        {
            if (model.Mistake(rule, item)) confusions[(model.TrueLabel(item) * k) + model.Predict(rule, item)]++;
        }
        var top = Array.IndexOf(confusions, confusions.Max());
        var text = $"rule {rule}: wrong on {model.Error[rule]:P0} of the items";
        return confusions[top] > 0 ? $"{text}, mostly '{model.Labels[top / k]}' labelled '{model.Labels[top % k]}'" : text;
    }
}
