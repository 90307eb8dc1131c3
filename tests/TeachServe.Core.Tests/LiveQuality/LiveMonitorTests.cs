using TeachServe.Core.LiveQuality;
using TeachServe.Core.Model;
using TeachServe.Core.Tests.Engine;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

public sealed class LiveMonitorTests
{
    private static readonly ModelVersion Model = TinyModels.Random(seed: 5, m: 24, teach: 30, test: 10, labels: 3, alpha: 1.0, lapse: 0.1);

    private static LiveMonitor Monitor() => new(
        new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.15, 0.35, 100), CandidateLimit = 3, MixtureAlpha = 0.05 },
        Model);

    private static int[] Candidates() => DriftCandidates.Choose(Model, Model.Prior, 0.15, 4);

    /// <summary>A mixed record: an annotator right at first, then drifting to a wrong rule, with refreshers in between.</summary>
    private static List<LiveEvent> Record(ulong seed)
    {
        var random = new SeededRandom(seed);
        var wrongRule = Candidates()[0];
        var events = new List<LiveEvent>();
        for (var t = 0; t < 300; t++)
        {
            if (t is 120 or 250)
            {
                events.Add(LiveEvent.Of(t == 120 ? RefresherOutcome.Passed : RefresherOutcome.Failed));
            }

            var item = random.NextInt(Model.ItemCount);
            var truth = Model.TrueLabel(item);
            var label = random.NextDouble() < 0.1 ? random.NextInt(3) : t < 60 ? truth : Model.Predict(wrongRule, item);
            int? modelItem = t % 7 == 0 ? null : item;
            events.Add(LiveEvent.Of(new LiveCheck(modelItem, label, truth, ElapsedDays: 0.5), t % 3 == 0 ? 0.2 : null));
        }

        return events;
    }

    [Fact]
    public void Replay_equals_applying_the_events_one_by_one()
    {
        var monitor = Monitor();
        var start = monitor.Start(Candidates());
        var events = Record(3);
        var state = start;
        var statuses = new HashSet<LiveStatus>();
        foreach (var e in events)
        {
            state = e.Check is { } c ? monitor.Apply(state, c, e.ModelPredictedAnswerError).State : LiveMonitor.AfterRefresher(state, e.Refresher!.Value);
            statuses.Add(state.Status);
        }

        Assert.Equal(state, monitor.Replay(start, events));
        Assert.True(state.Alarms > 0);
        Assert.Contains(LiveStatus.RefresherDue, statuses);
        Assert.Contains(LiveStatus.Paused, statuses);

        // A replay of a different record differs (the comparison can fail).
        Assert.NotEqual(state, monitor.Replay(start, Record(4)));
    }

    [Fact]
    public void Serialised_state_round_trips_and_continues_identically()
    {
        var monitor = Monitor();
        var state = monitor.Start(Candidates());
        foreach (var e in Record(7).Where(e => e.Check is not null))
        {
            var restored = LiveMonitorState.FromBase64(state.ToBase64());
            Assert.Equal(state, restored);
            Assert.Equal(state.CandidateStatistics, restored.CandidateStatistics);
            var direct = monitor.Apply(state, e.Check!.Value, e.ModelPredictedAnswerError);
            var viaBytes = monitor.Apply(restored, e.Check!.Value, e.ModelPredictedAnswerError);
            Assert.Equal(direct.State, viaBytes.State);
            Assert.Equal(direct.Alarms, viaBytes.Alarms);
            state = direct.State;
        }

        Assert.True(state.ToBytes().Length <= 1 + 28 + (8 * 4));
    }

    [Fact]
    public void Malformed_state_bytes_are_refused()
    {
        var bytes = Monitor().Start(Candidates()).ToBytes();
        Assert.Throws<FormatException>(() => LiveMonitorState.FromBytes(bytes.AsSpan(0, bytes.Length - 3)));
        var wrongVersion = (byte[])bytes.Clone();
        wrongVersion[0] = 99;
        Assert.Throws<FormatException>(() => LiveMonitorState.FromBytes(wrongVersion));
        var negative = (byte[])bytes.Clone();
        negative[5] = 0xFF;
        negative[6] = 0xFF;
        negative[7] = 0xFF;
        negative[8] = 0xFF;
        Assert.Throws<FormatException>(() => LiveMonitorState.FromBytes(negative));
    }

    [Fact]
    public void Alarm_restarts_the_charts_and_a_second_alarm_pauses()
    {
        var design = BernoulliCusum.Design(0.1, 0.3, 50);
        var monitor = new LiveMonitor(new LiveMonitorSettings { Cusum = design });
        var state = monitor.Start();
        var wrong = new LiveCheck(null, 1, 0);
        var steps = 0;
        LiveStep step;
        do
        {
            step = monitor.Apply(state, wrong);
            state = step.State;
            steps++;
        }
        while (step.Alarms == LiveAlarms.None);

        Assert.Equal(LiveAlarms.Count, step.Alarms);
        Assert.Equal((int)Math.Ceiling((double)design.Limit / design.Up), steps);
        Assert.Equal(LiveStatus.RefresherDue, state.Status);
        Assert.Equal(0, state.Cusum);
        do
        {
            step = monitor.Apply(state, wrong);
            state = step.State;
        }
        while (step.Alarms == LiveAlarms.None);

        Assert.Equal(LiveStatus.Paused, state.Status);
        state = LiveMonitor.AfterRefresher(state, RefresherOutcome.Passed);
        Assert.Equal(LiveStatus.Reliable, state.Status);
        Assert.Equal(2, state.Alarms);
    }

    [Fact]
    public void A_candidate_chart_moves_only_on_items_where_its_rule_differs_from_the_known_label()
    {
        var rule = Candidates()[0];
        var monitor = new LiveMonitor(new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.15, 0.35, 1000), CandidateLimit = 3 }, Model);
        var state = monitor.Start([rule]);
        var agreeing = Enumerable.Range(0, Model.ItemCount).First(i => Model.Predict(rule, i) == Model.TrueLabel(i));
        var step = monitor.Apply(state, new LiveCheck(agreeing, (Model.TrueLabel(agreeing) + 1) % 3, Model.TrueLabel(agreeing)));
        Assert.Equal(0, step.State.CandidateStatistics[0]);

        var diagnostic = Enumerable.Range(0, Model.ItemCount).Where(i => Model.Predict(rule, i) != Model.TrueLabel(i)).ToArray();
        for (var i = 0; i < 3; i++)
        {
            var item = diagnostic[i];
            step = monitor.Apply(state, new LiveCheck(item, Model.Predict(rule, item), Model.TrueLabel(item)));
            state = step.State;
        }

        Assert.Equal(LiveAlarms.CandidateRule, step.Alarms & LiveAlarms.CandidateRule);
        Assert.Equal(rule, step.AlarmedRule);

        // The known label on a diagnostic item moves the chart down, never below zero.
        var down = monitor.Apply(monitor.Start([rule]), new LiveCheck(diagnostic[0], Model.TrueLabel(diagnostic[0]), Model.TrueLabel(diagnostic[0])));
        Assert.Equal(0, down.State.CandidateStatistics[0]);
    }

    [Fact]
    public void Model_view_above_target_puts_the_annotator_on_watch()
    {
        var monitor = new LiveMonitor(new LiveMonitorSettings { Cusum = BernoulliCusum.Design(0.15, 0.35, 1000) });
        var right = new LiveCheck(null, 0, 0);
        Assert.Equal(LiveStatus.Reliable, monitor.Apply(monitor.Start(), right, 0.10).State.Status);
        Assert.Equal(LiveStatus.Watch, monitor.Apply(monitor.Start(), right, 0.20).State.Status);
    }
}
