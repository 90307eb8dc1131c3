using TeachServe.Server.Events;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.LiveQuality;

/// <summary>One status change of a live monitor while a batch was applied: the outcome that caused it and the counts after it.</summary>
public sealed record LiveStatusChange(string From, string To, string OutcomeId, DateTimeOffset AnsweredAt, int Checks, int Errors, bool Alarm)
{
    /// <summary>The views that said "worse than target" on that outcome (<see cref="LiveCauses"/>).</summary>
    public IReadOnlyList<string> Causes { get; init; } = [];
    /// <summary>For a candidate-rule alarm, the rule in words.</summary>
    public string? CandidateRule { get; init; }
    /// <summary>The model view's predicted answer error after that outcome.</summary>
    public double? ModelPredictedError { get; init; }
}

/// <summary>
/// The <c>data</c> of an <c>org.teachserve.live.status</c> webhook: a released annotator's live-quality status moved
/// from <paramref name="From"/> to <paramref name="To"/> when the outcome <paramref name="OutcomeId"/> was applied.
/// </summary>
/// <param name="Checks">Live checks applied since the release, this outcome included.</param>
/// <param name="Errors">Of those, the wrong answers.</param>
/// <param name="Alarm">Whether this outcome raised a monitor alarm.</param>
/// <param name="Rebuilt">True when an earlier outcome arrived late and the state was rebuilt from the log: the change
/// then sums up the rebuild (from the status before the batch to the status after it).</param>
/// <param name="Causes">Which views said "worse than target" on that outcome: <c>count-chart</c>, <c>candidate-rule</c>,
/// <c>model-view</c> (none for a change back to reliable).</param>
/// <param name="CandidateRule">For a candidate-rule alarm, the rule the answers follow, in words.</param>
/// <param name="ModelPredictedError">The model view's predicted answer error after that outcome.</param>
public sealed record LiveStatusData(
    string ProjectId, string SessionId, string WorkerRef, string From, string To, int Checks, int Errors, bool Alarm,
    string OutcomeId, DateTimeOffset AnsweredAt, bool Rebuilt, IReadOnlyList<string> Causes, string? CandidateRule,
    double? ModelPredictedError);

/// <summary>
/// Turns a batch's status changes into webhook deliveries, written to the outbox in the batch's transaction (all or
/// nothing with the outcomes that caused them). Applied in order, each change is one delivery. A rebuild replays the
/// monitor from the release, re-living changes already delivered, so it sends at most one delivery, from the status
/// receivers were last told to the status after the rebuild. Either way each delivery's <c>from</c> is the previous
/// one's <c>to</c>.
/// </summary>
public static class LiveStatusWebhooks
{
    /// <summary>
    /// Adds the deliveries to <paramref name="db"/> (none without a webhook destination); returns how many.
    /// <paramref name="lastApplied"/> is the last outcome the monitor applied.
    /// </summary>
    public static int Add(
        TeachServeDb db, Project project, LiveMonitorRecord record, string statusBefore, IReadOnlyList<LiveStatusChange> changes,
        bool rebuilt, LiveCheckRecord lastApplied, DateTimeOffset now)
    {
        if (project.WebhookUrl is null) return 0;
        IEnumerable<LiveStatusChange> sent = changes;
        if (rebuilt)
        {
            if (record.Status == statusBefore) return 0;
            // The replay may end in its start status without changing at all, while receivers were told otherwise.
            sent = [changes.Count > 0
                ? changes[^1] with { From = statusBefore }
                : new LiveStatusChange(statusBefore, record.Status, lastApplied.OutcomeId, lastApplied.AnsweredAt, record.Checks, record.Errors, false)
                {
                    ModelPredictedError = record.ModelError,
                }];
        }
        var count = 0;
        foreach (var c in sent)
        {
            var data = new LiveStatusData(record.ProjectId, record.SessionId, record.WorkerRef, c.From, c.To, c.Checks, c.Errors,
                c.Alarm, c.OutcomeId, c.AnsweredAt, rebuilt, c.Causes, c.CandidateRule, c.ModelPredictedError);
            if (Outbox.Message(project, EventTypes.LiveStatusChanged, now, record.SessionId, record.WorkerRef, data) is { } message)
            {
                db.Outbox.Add(message);
                count++;
            }
        }
        return count;
    }
}
