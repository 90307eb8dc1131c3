using TeachServe.Core.Model;

namespace TeachServe.Core.LiveQuality;

/// <summary>Which monitors alarmed on one check.</summary>
[Flags]
public enum LiveAlarms
{
    None = 0,
    /// <summary>The count CUSUM on live-check errors reached its limit.</summary>
    Count = 1,
    /// <summary>A candidate-rule CUSUM reached its limit: the answers follow that rule.</summary>
    CandidateRule = 2,
    /// <summary>The always-valid mixture test rejected "error ≤ target".</summary>
    Mixture = 4,
    /// <summary>The item-aware CUSUM reached its limit: answers unlikely for a reliable annotator on the items checked.</summary>
    ItemAware = 8,
}

/// <summary>The outcome of one step: the new state, what the views said, and which monitors alarmed.</summary>
/// <param name="AlarmedRule">For a candidate-rule alarm, the hypothesis whose chart alarmed first; otherwise −1.</param>
public sealed record LiveStep(LiveMonitorState State, LiveSignals Signals, LiveAlarms Alarms, int AlarmedRule);

/// <summary>One entry of an annotator's live record, for <see cref="LiveMonitor.Replay"/>: a live check or a refresher's end.</summary>
/// <param name="ModelPredictedAnswerError">The model view's predicted answer error after the check, when the caller has one.</param>
public readonly record struct LiveEvent(LiveCheck? Check, RefresherOutcome? Refresher, double? ModelPredictedAnswerError = null)
{
    public static LiveEvent Of(LiveCheck check, double? modelPredictedAnswerError = null) => new(check, null, modelPredictedAnswerError);

    public static LiveEvent Of(RefresherOutcome outcome) => new(null, outcome);
}

/// <summary>
/// The model-free drift monitors of a released annotator and the status they drive. Pure: the same state and check give
/// the same step on every node, so a server may update a stored state or rebuild it from the log, interchangeably.
/// After an alarm every chart restarts from zero, so a second alarm is fresh evidence.
/// </summary>
public sealed class LiveMonitor
{
    private readonly ModelVersion? _model;
    private readonly double _candidateNoise;

    /// <param name="model">The model version the annotator was released on; needed only for candidate-rule charts.</param>
    public LiveMonitor(LiveMonitorSettings settings, ModelVersion? model = null)
    {
        ArgumentNullException.ThrowIfNull(settings);
        settings.Validate();
        if (settings.CandidateLimit > 0 && model is null)
        {
            throw new ArgumentException("Candidate-rule charts need the model version.", nameof(model));
        }

        if (settings.ItemAware is { } itemAware && model is not null && (itemAware.ItemCount != model.ItemCount || itemAware.LabelCount != model.LabelCount))
        {
            throw new ArgumentException("The item-aware CUSUM was designed for another model version.", nameof(settings));
        }

        Settings = settings;
        _model = model;
        _candidateNoise = settings.TargetAnswerError;
    }

    public LiveMonitorSettings Settings { get; }

    /// <summary>The state at release, watching <paramref name="candidateRules"/> (from <see cref="DriftCandidates.Choose"/>; empty for none).</summary>
    public LiveMonitorState Start(IReadOnlyList<int>? candidateRules = null)
    {
        var rules = candidateRules?.ToArray() ?? [];
        if (rules.Length > 0 && (_model is null || rules.Any(h => h < 0 || h >= _model.HypothesisCount)))
        {
            throw new ArgumentOutOfRangeException(nameof(candidateRules), "Candidate rules must be hypotheses of the model version.");
        }

        return new LiveMonitorState(LiveStatus.Reliable, 0, 0, 0, 0, 0, 0, rules, new int[rules.Length], new double[Settings.ItemAware?.Alternatives.Count ?? 0]);
    }

    /// <summary>One live check.</summary>
    /// <param name="modelPredictedAnswerError">The model view's predicted answer error after this check, if known; above target it puts the annotator on watch.</param>
    public LiveStep Apply(LiveMonitorState state, LiveCheck check, double? modelPredictedAnswerError = null)
    {
        ArgumentNullException.ThrowIfNull(state);
        var wrong = check.Wrong;
        var design = Settings.Cusum;
        var alarms = LiveAlarms.None;

        var cusum = design.Step(state.Cusum, wrong);
        if (design.Alarms(cusum))
        {
            alarms |= LiveAlarms.Count;
        }

        var statistics = state.CandidateStatistics.ToArray();
        var alarmedRule = -1;
        if (Settings.CandidateLimit > 0 && check.Item is { } item && _model is not null)
        {
            if (item < 0 || item >= _model.ItemCount)
            {
                throw new ArgumentOutOfRangeException(nameof(check), item, "The item is not one of the model version's items.");
            }

            for (var i = 0; i < statistics.Length; i++)
            {
                var rule = state.CandidateRules[i];
                var said = _model.Predict(rule, item);
                if (said == check.TrueLabel)
                {
                    continue;
                }

                var step = check.Label == said ? 1 : check.Label == check.TrueLabel ? -1 : 0;
                statistics[i] = Math.Max(0, statistics[i] + step);
                if (statistics[i] >= Settings.CandidateLimit && alarmedRule < 0)
                {
                    alarmedRule = rule;
                    alarms |= LiveAlarms.CandidateRule;
                }
            }
        }

        var itemAware = state.ItemAwareStatistics.ToArray();
        if (Settings.ItemAware is { } itemDesign)
        {
            if (itemAware.Length != itemDesign.Alternatives.Count)
            {
                throw new ArgumentException("The state was started without the item-aware CUSUM; start it with these settings.", nameof(state));
            }

            if (itemDesign.Step(itemAware, check))
            {
                alarms |= LiveAlarms.ItemAware;
            }
        }

        var mixtureChecks = state.MixtureChecks + 1;
        var mixtureErrors = state.MixtureErrors + (wrong ? 1 : 0);
        if (Settings.MixtureAlpha > 0
            && MixtureMonitor.Rejects(mixtureChecks, mixtureErrors, design.TargetError, Settings.MixtureA, Settings.MixtureB, Settings.MixtureAlpha))
        {
            alarms |= LiveAlarms.Mixture;
        }

        var alarm = alarms != LiveAlarms.None;
        var watch = cusum >= Settings.WatchFraction * design.Limit
            || (Settings.ItemAware is { } watched && ItemAwareCusumDesign.Value(itemAware) >= Settings.WatchFraction * watched.Limit)
            || (modelPredictedAnswerError is { } e && e > Settings.TargetAnswerError);
        var signals = new LiveSignals(alarm, watch);
        var status = LiveStatusMachine.AfterCheck(state.Status, signals);
        if (alarm)
        {
            cusum = 0;
            Array.Clear(statistics);
            Array.Clear(itemAware);
            mixtureChecks = 0;
            mixtureErrors = 0;
        }

        var next = new LiveMonitorState(
            status,
            state.Checks + 1,
            state.Errors + (wrong ? 1 : 0),
            cusum,
            mixtureChecks,
            mixtureErrors,
            state.Alarms + (alarm ? 1 : 0),
            [.. state.CandidateRules],
            statistics,
            itemAware);
        return new LiveStep(next, signals, alarms, alarmedRule);
    }

    /// <summary>A refresher ended: the status follows <see cref="LiveStatusMachine.AfterRefresher"/> and every chart restarts.</summary>
    public static LiveMonitorState AfterRefresher(LiveMonitorState state, RefresherOutcome outcome)
    {
        ArgumentNullException.ThrowIfNull(state);
        return new LiveMonitorState(
            LiveStatusMachine.AfterRefresher(state.Status, outcome),
            state.Checks,
            state.Errors,
            0,
            0,
            0,
            state.Alarms,
            [.. state.CandidateRules],
            new int[state.CandidateRules.Count],
            new double[state.ItemAwareStatistics.Count]);
    }

    /// <summary>The state after a whole live record, from <paramref name="start"/>; equal to applying the events one by one.</summary>
    public LiveMonitorState Replay(LiveMonitorState start, IEnumerable<LiveEvent> events)
    {
        ArgumentNullException.ThrowIfNull(events);
        var state = start;
        foreach (var e in events)
        {
            if (e.Check is { } check)
            {
                state = Apply(state, check, e.ModelPredictedAnswerError).State;
            }
            else if (e.Refresher is { } outcome)
            {
                state = AfterRefresher(state, outcome);
            }
            else
            {
                throw new ArgumentException("An event must be a check or a refresher outcome.", nameof(events));
            }
        }

        return state;
    }
}
