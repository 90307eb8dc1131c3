using MathNet.Numerics.Distributions;
using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.LiveQuality;

public enum RefresherPhase
{
    Teaching,
    Checking,
    Passed,
    Failed,
}

/// <summary>
/// A refresher for a released annotator: teaching that starts from the live belief (<see cref="LiveBelief"/>) and picks
/// each item with the adaptive policy (DESIGN 2.4), i.e. where the belief says the annotator now errs and showing the
/// label would lower the predicted error most; then a short check on held-out items without feedback. The check passes
/// when the errors are at most the largest count an annotator exactly at the target answer error stays within with
/// probability ≥ <see cref="RefresherSettings.PassAtTarget"/>.
/// </summary>
public sealed class RefresherRun
{
    private readonly ModelVersion _model;
    private readonly RefresherSettings _settings;
    private readonly Belief _belief;
    private readonly TeachingPolicy _policy;
    private readonly bool[] _shown;
    private readonly int[] _checkItems;
    private readonly SeededRandom _random;
    private int _checkIndex;

    private RefresherRun(ModelVersion model, LiveBelief live, double q, RefresherSettings settings, IReadOnlyCollection<int> usedTestItems, ulong seed)
    {
        _model = model;
        _settings = settings;
        _belief = Belief.Continue(model, q, live.Lapse, live.Weights);
        _policy = new TeachingPolicy(model, PolicyNames.Adaptive, 0);
        _shown = new bool[model.ItemCount];
        _random = new SeededRandom(seed);
        var pool = Enumerable.Range(model.TeachCount, model.TestCount).Where(i => !usedTestItems.Contains(i)).ToArray();
        if (pool.Length < settings.CheckItems)
        {
            pool = [.. Enumerable.Range(model.TeachCount, model.TestCount)];
        }

        _random.Shuffle(pool.AsSpan());
        _checkItems = pool.Take(settings.CheckItems).ToArray();
        TargetAnswerError = GateDesign.AnswerError(settings.TargetRuleError, live.Lapse, model.LabelCount);
        AllowedErrors = AllowedErrorsFor(_checkItems.Length, TargetAnswerError, settings.PassAtTarget);
        Phase = RefresherPhase.Teaching;
        Advance();
    }

    public RefresherPhase Phase { get; private set; }

    /// <summary>The item to show now; −1 when the refresher has ended.</summary>
    public int CurrentItem { get; private set; } = -1;

    public int TaughtCount { get; private set; }
    public int CheckAnswered => _checkIndex;
    public int CheckErrors { get; private set; }
    public int CheckLength => _checkItems.Length;
    public int AllowedErrors { get; }
    public double TargetAnswerError { get; }

    /// <summary>The belief's predicted rule error now.</summary>
    public double PredictedRuleError => _belief.PredictedError();

    public bool IsEnded => Phase is RefresherPhase.Passed or RefresherPhase.Failed;

    /// <param name="usedTestItems">Held-out items to avoid in the check (those of the annotator's earlier tests), where the pool allows.</param>
    public static RefresherRun Start(ModelVersion model, LiveBelief live, double q, RefresherSettings settings, IReadOnlyCollection<int>? usedTestItems = null, ulong seed = 1)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(live);
        ArgumentNullException.ThrowIfNull(settings);
        settings.Validate();
        if (live.Model != model)
        {
            throw new ArgumentException("The live belief is over another model version.", nameof(live));
        }

        if (model.TestCount == 0 || model.TeachCount == 0)
        {
            throw new ArgumentException("A refresher needs teach and test items.", nameof(model));
        }

        return new RefresherRun(model, live, q, settings, usedTestItems ?? [], seed);
    }

    /// <summary>The largest error count k with P(Binomial(n, p) ≤ k) ≥ passAtTarget.</summary>
    public static int AllowedErrorsFor(int n, double p, double passAtTarget)
    {
        for (var k = 0; k <= n; k++)
        {
            if (Binomial.CDF(p, n, k) >= passAtTarget)
            {
                return k;
            }
        }

        return n;
    }

    /// <summary>The annotator's answer to <see cref="CurrentItem"/>; during teaching the true label is shown afterwards.</summary>
    public void Answer(int label)
    {
        if (IsEnded)
        {
            throw new InvalidOperationException("The refresher has ended.");
        }

        ArgumentOutOfRangeException.ThrowIfNegative(label);
        ArgumentOutOfRangeException.ThrowIfGreaterThanOrEqual(label, _model.LabelCount);
        var item = CurrentItem;
        if (Phase == RefresherPhase.Teaching)
        {
            _belief.Teach(item, label);
            _shown[item] = true;
            TaughtCount++;
        }
        else
        {
            _belief.Observe(item, label);
            if (label != _model.TrueLabel(item))
            {
                CheckErrors++;
            }

            _checkIndex++;
        }

        Advance();
    }

    private void Advance()
    {
        if (Phase == RefresherPhase.Teaching)
        {
            var done = TaughtCount >= _settings.MaxItems
                || (_belief.PredictedError() <= _settings.TargetRuleError && _belief.Confidence(_settings.TargetRuleError) >= _settings.Confidence);
            var next = done ? -1 : _policy.ChooseNext(_belief, _shown, TaughtCount, _random);
            if (next >= 0)
            {
                CurrentItem = next;
                return;
            }

            Phase = RefresherPhase.Checking;
        }

        if (Phase == RefresherPhase.Checking)
        {
            if (CheckErrors > AllowedErrors)
            {
                Finish(RefresherPhase.Failed);
            }
            else if (_checkIndex >= _checkItems.Length)
            {
                Finish(RefresherPhase.Passed);
            }
            else
            {
                CurrentItem = _checkItems[_checkIndex];
            }
        }
    }

    private void Finish(RefresherPhase phase)
    {
        Phase = phase;
        CurrentItem = -1;
    }
}
