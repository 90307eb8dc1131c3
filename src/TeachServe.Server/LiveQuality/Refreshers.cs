using Microsoft.EntityFrameworkCore;
using TeachServe.Core.LiveQuality;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;

namespace TeachServe.Server.LiveQuality;

/// <summary>Where a refresher starts: the model version it runs on and the belief it starts from.</summary>
public sealed record RefresherPlan(CompiledVersion Version, RefresherStart Start, double[] Weights);

/// <summary>
/// Refreshers of released annotators. A refresher is an ordinary session (same start call with
/// <c>purpose: refresher</c>, same launch link and annotator page) on the model version the annotator was released on,
/// started from the belief their live record gives now (<see cref="RefresherSessions"/>). How it ends moves their live
/// monitor: passed → reliable, failed → paused (<see cref="LiveStatusMachine.AfterRefresher"/>).
/// </summary>
public sealed class Refreshers(TeachServeDb db, TimeProvider time, ModelVersionCache versions)
{
    /// <summary>The refresher's teaching budget (the engine's default, <see cref="RefresherSettings.MaxItems"/>).</summary>
    public static int MaxItems { get; } = new RefresherSettings { TargetRuleError = 0 }.MaxItems;

    /// <summary>
    /// The belief a refresher of the worker starts from: the final belief of their newest ended session since their
    /// last release (the release itself, or a later refresher), moved by every live check on the version's items
    /// answered since, without forgetting (the refresher's adaptive teaching then aims at the mistakes those checks
    /// showed). 409 when the worker has never been released in the project.
    /// </summary>
    public async Task<Outcome<RefresherPlan>> PlanAsync(string projectId, string workerRef, string sessionId, CancellationToken ct)
    {
        var release = (await db.Releases.AsNoTracking().Where(r => r.ProjectId == projectId && r.WorkerRef == workerRef)
            .OrderByDescending(r => r.Id).FirstOrDefaultAsync(ct));
        if (release is null)
            return Problems.Conflict("This worker has not been released in the project; a refresher is for released annotators (start an onboarding session instead).");

        var from = await LatestEndedAsync(projectId, workerRef, release.SessionId, release.ModelVersion, ct);
        var version = await versions.GetAsync(projectId, release.ModelVersion, ct);
        var ended = await SessionLoader.ReplayAsync(db, version, from, ct);

        var items = new Dictionary<string, int>(StringComparer.Ordinal);
        for (var i = 0; i < version.Model.ItemCount; i++) items[version.Model.ItemIds[i]] = i;
        var live = new LiveBelief(version.Model, ended.BeliefState.Lapse, ended.Belief, ForgettingRate.None);
        var after = from.EndedAt ?? from.LastSeenAt;
        var checks = await db.LiveChecks.AsNoTracking()
            .Where(c => c.ProjectId == projectId && c.WorkerRef == workerRef && c.AnsweredAt > after)
            .OrderBy(c => c.AnsweredAt).ThenBy(c => c.Id)
            .Select(c => new { c.ItemId, c.Label, c.KnownLabel }).ToListAsync(ct);
        var observed = 0;
        foreach (var check in checks)
        {
            if (!items.TryGetValue(check.ItemId, out var item)
                || !version.LabelIndex.TryGetValue(check.Label, out var label)
                || !version.LabelIndex.TryGetValue(check.KnownLabel, out var known))
                continue;
            live.Observe(new LiveCheck(item, label, known));
            observed++;
        }

        var weights = live.Weights.ToArray();
        var start = new RefresherStart
        {
            SessionId = sessionId, ProjectId = projectId, WorkerRef = workerRef, FromSessionId = from.Id,
            LiveChecks = observed, MaxItems = MaxItems, Weights = RefresherStart.Pack(weights), CreatedAt = time.GetUtcNow(),
        };
        return new RefresherPlan(version, start, weights);
    }

    /// <summary>
    /// The worker's newest ended session since the release of <paramref name="releaseSessionId"/> on its version: the
    /// release itself, or a later refresher. Both refreshers and the live model view start from its final belief.
    /// </summary>
    public async Task<Session> LatestEndedAsync(string projectId, string workerRef, string releaseSessionId, int modelVersion, CancellationToken ct)
    {
        // The worker's sessions in the order they started (the start events' sequence), from the release on; sessions
        // of one worker never overlap, so the last to start that has ended is the last to end.
        var started = await db.Events.AsNoTracking()
            .Where(e => e.ProjectId == projectId && e.WorkerRef == workerRef && e.Type == EventTypes.SessionStarted)
            .OrderBy(e => e.Id).Select(e => e.SessionId!).ToListAsync(ct);
        var since = started.SkipWhile(id => id != releaseSessionId).ToList();
        var candidates = await db.Sessions.AsNoTracking()
            .Where(s => since.Contains(s.Id) && !s.IsActive && s.ModelVersion == modelVersion
                        && (s.Id == releaseSessionId || s.Purpose == SessionPurposes.Refresher))
            .ToDictionaryAsync(s => s.Id, StringComparer.Ordinal, ct);
        return since.AsEnumerable().Reverse().Select(id => candidates.GetValueOrDefault(id)).First(s => s is not null)!;
    }

    /// <summary>The final belief of an ended session, from its event log, and the lapse it was filtered with.</summary>
    public async Task<(double[] Weights, double Lapse)> EndBeliefAsync(CompiledVersion version, Session session, CancellationToken ct)
    {
        var ended = await SessionLoader.ReplayAsync(db, version, session, ct);
        return (ended.Belief.ToArray(), ended.BeliefState.Lapse);
    }

    /// <summary>The final belief of the session <paramref name="sessionId"/>.</summary>
    public async Task<(double[] Weights, double Lapse)> EndBeliefAsync(CompiledVersion version, string sessionId, CancellationToken ct) =>
        await EndBeliefAsync(version, await db.Sessions.AsNoTracking().FirstAsync(s => s.Id == sessionId, ct), ct);

    /// <summary>
    /// Applies every refresher of the worker that ended since their monitor last took one in, in its own transaction;
    /// called when a refresher ends, and again by every later batch of live checks and every view, so a crash between
    /// the two commits only delays the status change.
    /// </summary>
    public async Task ApplyEndedAsync(string projectId, string workerRef, CancellationToken ct)
    {
        for (var attempt = 1; ; attempt++)
        {
            var record = await db.LiveMonitors.FirstOrDefaultAsync(m => m.ProjectId == projectId && m.WorkerRef == workerRef, ct);
            if (record is null) return;
            try
            {
                if (await ApplyPendingAsync(db, record, time.GetUtcNow(), ct)) await db.SaveChangesAsync(ct);
                return;
            }
            catch (DbUpdateConcurrencyException) when (attempt < 3)
            {
                // A batch of live checks moved the monitor meanwhile (and applied the refresher itself, or will).
                db.ChangeTracker.Clear();
            }
        }
    }

    /// <summary>Applies the pending refreshers of every monitored worker of the project (before the owner's views).</summary>
    public async Task ApplyEndedAsync(string projectId, CancellationToken ct)
    {
        var workers = await db.RefresherStarts.AsNoTracking().Where(r => r.ProjectId == projectId && r.AppliedAt == null)
            .Join(db.Sessions.Where(s => !s.IsActive), r => r.SessionId, s => s.Id, (r, _) => r.WorkerRef)
            .Distinct().ToListAsync(ct);
        foreach (var worker in workers) await ApplyEndedAsync(projectId, worker, ct);
    }

    /// <summary>
    /// Applies to a tracked monitor row the refreshers of its worker that have ended and that no monitor has taken in
    /// yet (each marked applied in the same transaction: exactly once): status per <see cref="LiveMonitor.AfterRefresher"/>,
    /// charts restarted, each status change an event. One that ended before this monitor started (a later onboarding
    /// restarted it) is only marked. The caller saves. True if anything changed.
    /// </summary>
    public static async Task<bool> ApplyPendingAsync(TeachServeDb db, LiveMonitorRecord record, DateTimeOffset now, CancellationToken ct)
    {
        var pending = await db.RefresherStarts
            .Where(r => r.ProjectId == record.ProjectId && r.WorkerRef == record.WorkerRef && r.AppliedAt == null)
            .Join(db.Sessions.Where(s => !s.IsActive), r => r.SessionId, s => s.Id, (r, s) => new { Start = r, s.Phase, s.EndedAt, s.ModelVersion })
            .ToListAsync(ct);
        if (pending.Count == 0) return false;
        var state = LiveMonitorState.FromBytes(record.State);
        foreach (var refresher in pending.OrderBy(p => p.EndedAt).ThenBy(p => p.Start.SessionId, StringComparer.Ordinal))
        {
            refresher.Start.AppliedAt = now;
            var endedAt = refresher.EndedAt ?? now;
            if (endedAt < record.StartedAt || refresher.ModelVersion != record.ModelVersion) continue;
            var before = state.Status;
            state = LiveMonitor.AfterRefresher(state, Outcome(refresher.Phase));
            // The model view continues from the refresher's final belief, loaded at the next live check.
            (record.Belief, record.ModelError, record.ModelRisk) = (null, null, null);
            if (state.Status != before)
                db.Events.Add(StatusEvent(record, before, state.Status, now, refresher.Start.SessionId));
            if (endedAt > record.LastAnsweredAt) record.LastAnsweredAt = endedAt;
        }
        record.State = state.ToBytes();
        record.Status = LiveStatusNames.Of(state.Status);
        record.UpdatedAt = now;
        record.Revision++;
        return true;
    }

    /// <summary>The refreshers this monitor has taken in since it started, in the order they ended (for a rebuild).</summary>
    public static async Task<List<EndedRefresher>> AppliedSinceAsync(TeachServeDb db, LiveMonitorRecord record, CancellationToken ct)
    {
        var rows = await db.RefresherStarts.AsNoTracking()
            .Where(r => r.ProjectId == record.ProjectId && r.WorkerRef == record.WorkerRef && r.AppliedAt != null)
            .Join(db.Sessions.Where(s => !s.IsActive && s.ModelVersion == record.ModelVersion), r => r.SessionId, s => s.Id,
                (r, s) => new { s.Id, s.Phase, s.EndedAt })
            .ToListAsync(ct);
        return rows.Where(s => s.EndedAt >= record.StartedAt)
            .OrderBy(s => s.EndedAt).ThenBy(s => s.Id, StringComparer.Ordinal)
            .Select(s => new EndedRefresher(s.Id, s.EndedAt!.Value, Outcome(s.Phase)))
            .ToList();
    }

    private static RefresherOutcome Outcome(string phase) => phase == Phases.Released ? RefresherOutcome.Passed : RefresherOutcome.Failed;

    public static SessionEvent StatusEvent(LiveMonitorRecord record, LiveStatus from, LiveStatus to, DateTimeOffset now, string refresherSessionId) => new()
    {
        ProjectId = record.ProjectId, SessionId = refresherSessionId, WorkerRef = record.WorkerRef,
        Type = EventTypes.LiveStatusChanged, At = now,
        DataJson = Json.Serialize(new
        {
            from = LiveStatusNames.Of(from), to = LiveStatusNames.Of(to), refresherSessionId,
            checks = record.Checks, errors = record.Errors,
        }),
    };
}

/// <summary>A refresher session that ended, and how.</summary>
public sealed record EndedRefresher(string SessionId, DateTimeOffset EndedAt, RefresherOutcome Outcome);
