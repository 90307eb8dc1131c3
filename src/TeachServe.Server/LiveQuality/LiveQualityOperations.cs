using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.LiveQuality;
using TeachServe.Core.Projects;
using TeachServe.Core.Statistics;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.LiveQuality;

/// <summary>
/// Live checks of released annotators: storing the platform's outcomes (retry-safe, all or nothing per batch), the drift
/// monitor of each annotator, and the owner's views. Problems are returned, not thrown.
/// </summary>
public sealed class LiveQualityOperations(
    TeachServeDb db, TimeProvider time, ModelVersionCache versions, LiveMonitors monitors, Refreshers refreshers,
    LiveCheckWriter writer, OutboxSignal outbox, IOptions<TeachServeOptions> options)
{
    /// <summary>
    /// Validates a batch, then the live-check writer stores it all or nothing (in one transaction with the batches
    /// waiting beside it, <see cref="StoreTogetherAsync"/>) and applies each new outcome to its annotator's monitor, in
    /// order of answered time then arrival. 422 with per-line errors when any outcome is invalid (nothing is stored);
    /// 409 when an outcome id was stored before with a different body.
    /// </summary>
    public async Task<Outcome<LiveChecksStored>> PostAsync(string projectId, LiveChecksRequest request, CancellationToken ct)
    {
        var outcomes = request.Outcomes;
        if (outcomes.Count is 0 or > LiveQualityLimits.MaxBatch)
            return Problems.Unprocessable($"A batch holds 1 to {LiveQualityLimits.MaxBatch} outcomes; this one holds {outcomes.Count}.");
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;

        var checkedBatch = await ValidateAsync(projectId, outcomes, ct);
        if (!checkedBatch.Succeeded) return checkedBatch.Problem;
        var batch = checkedBatch.Value;

        return await writer.StoreAsync(new PendingLiveChecks { ProjectId = projectId, Lines = batch }, ct);
    }

    /// <param name="Inline">The item the outcome carries inline, to store in pool <c>live</c> unless already stored.</param>
    public sealed record ValidLine(int Index, LiveCheckInput Input, DateTimeOffset AnsweredAt, string KnownLabel, Releases.Release Release,
        ItemDefinition? Inline = null);

    private async Task<Outcome<List<ValidLine>>> ValidateAsync(string projectId, IReadOnlyList<LiveCheckInput> outcomes, CancellationToken ct)
    {
        var errors = new List<LiveCheckError>();
        for (var i = 0; i < outcomes.Count; i++)
        {
            var o = outcomes[i];
            if (!Printable(o.OutcomeId, LiveQualityLimits.OutcomeIdLength))
                errors.Add(new(i, "outcomeId", $"Must be 1 to {LiveQualityLimits.OutcomeIdLength} printable characters."));
            if (!Printable(o.WorkerRef, SessionLimits.WorkerRefLength))
                errors.Add(new(i, "workerRef", $"Must be 1 to {SessionLimits.WorkerRefLength} printable characters."));
            if (o.ItemId.Length is 0 or > Items.ItemLimits.IdLength)
                errors.Add(new(i, "itemId", $"Must be 1 to {Items.ItemLimits.IdLength} characters."));
        }
        if (errors.Count > 0) return Problems.Invalid("Some outcomes are not valid; nothing was stored.", errors);

        var workers = outcomes.Select(o => o.WorkerRef).Distinct(StringComparer.Ordinal).ToList();
        var itemIds = outcomes.Select(o => o.ItemId).Distinct(StringComparer.Ordinal).ToList();
        // The latest release of each worker: a monitor continues from the session that released them last.
        // Only the columns the monitor needs: the evidence JSON (kilobytes per release) is never read here.
        var releases = (await db.Releases.AsNoTracking().Where(r => r.ProjectId == projectId && workers.Contains(r.WorkerRef))
                .Select(r => new Releases.Release
                {
                    Id = r.Id, ProjectId = r.ProjectId, SessionId = r.SessionId, WorkerRef = r.WorkerRef, ModelVersion = r.ModelVersion,
                    ReleasedAt = r.ReleasedAt, EvidenceJson = string.Empty,
                }).ToListAsync(ct))
            .GroupBy(r => r.WorkerRef, StringComparer.Ordinal).ToDictionary(g => g.Key, g => g.MaxBy(r => r.Id)!, StringComparer.Ordinal);
        var known = await db.Items.AsNoTracking().Where(i => i.ProjectId == projectId && itemIds.Contains(i.ItemId))
            .ToDictionaryAsync(i => i.ItemId, i => i.Label, StringComparer.Ordinal, ct);
        var inline = await InlineItemsAsync(projectId, outcomes, errors, ct);
        var labelsOf = new Dictionary<int, IReadOnlyDictionary<string, int>>();
        foreach (var number in releases.Values.Select(r => r.ModelVersion).Distinct())
            labelsOf[number] = (await versions.GetAsync(projectId, number, ct)).LabelIndex;

        var lines = new List<ValidLine>(outcomes.Count);
        var firstById = new Dictionary<string, int>(StringComparer.Ordinal);
        for (var i = 0; i < outcomes.Count; i++)
        {
            var o = outcomes[i];
            var release = releases.GetValueOrDefault(o.WorkerRef);
            if (release is null) errors.Add(new(i, "workerRef", "No released session of this worker in the project."));
            var knownLabel = inline.TryGetValue(o.ItemId, out var carried) ? carried.Label : known.GetValueOrDefault(o.ItemId);
            if (knownLabel is null) errors.Add(new(i, "itemId", "No such item in the project, and the outcome carries no 'item'."));
            if (release is not null && !labelsOf[release.ModelVersion].ContainsKey(o.Label))
                errors.Add(new(i, "label", "Not one of the project's labels."));
            var answeredAt = Millisecond(o.AnsweredAt);
            if (firstById.TryGetValue(o.OutcomeId, out var first))
            {
                if (!Same(outcomes[first], o)) errors.Add(new(i, "outcomeId", $"Outcome {first} of this batch has the same id and a different body."));
                continue;
            }
            firstById[o.OutcomeId] = i;
            if (release is not null && knownLabel is not null) lines.Add(new(i, o, answeredAt, knownLabel, release, o.Item is null ? null : carried));
        }
        if (errors.Count > 0) return Problems.Invalid("Some outcomes are not valid; nothing was stored.", errors.OrderBy(e => e.Index).ToList());
        return lines;
    }

    /// <summary>
    /// The items the outcomes carry inline, by id, checked as an upload's items are (<see cref="ItemParsing.Check"/>):
    /// each problem is added to <paramref name="errors"/> with the outcome's index and <c>item.</c> before the field. An id
    /// carried twice in the batch must carry the same item.
    /// </summary>
    private async Task<Dictionary<string, ItemDefinition>> InlineItemsAsync(
        string projectId, IReadOnlyList<LiveCheckInput> outcomes, List<LiveCheckError> errors, CancellationToken ct)
    {
        var items = new Dictionary<string, ItemDefinition>(StringComparer.Ordinal);
        var firstOf = new Dictionary<string, int>(StringComparer.Ordinal);
        var (checks, indices) = (new List<ItemDefinition>(), new List<int>());
        for (var i = 0; i < outcomes.Count; i++)
        {
            if (outcomes[i].Item is not { } item) continue;
            var definition = item.Definition(outcomes[i].ItemId);
            if (firstOf.TryGetValue(definition.Id, out var first))
            {
                if (Json.Serialize(items[definition.Id]) != Json.Serialize(definition))
                    errors.Add(new(i, "item", $"Outcome {first} of this batch carries another item under the same id."));
                continue;
            }
            firstOf[definition.Id] = i;
            items[definition.Id] = definition;
            checks.Add(definition);
            indices.Add(i);
        }
        if (items.Count == 0) return items;

        var project = await db.Projects.AsNoTracking().FirstAsync(p => p.Id == projectId, ct);
        foreach (var problem in ItemParsing.Check(ProjectOperations.Settings(project), checks, indices))
            errors.Add(new(problem.Line ?? 0, problem.Field == "id" ? "itemId" : "item." + problem.Field, problem.Reason));
        return items;
    }

    /// <summary>
    /// The inline items not stored yet, as rows to add with the batch; an item stored earlier under the same id with other
    /// content (or in another pool) adds a 409 line to <paramref name="conflicts"/>. 422 when the project would hold more
    /// items than it may.
    /// </summary>
    /// <param name="addedByGroup">Items an earlier batch of the same transaction adds, by (project, item id), as
    /// their JSON: a later batch carrying one of them treats it as stored (it is, at the commit).</param>
    private async Task<Outcome<List<Item>>> NewLiveItemsAsync(
        string projectId, IReadOnlyList<ValidLine> batch, List<LiveCheckError> conflicts,
        Dictionary<(string, string), string> addedByGroup, CancellationToken ct)
    {
        var carried = batch.Where(l => l.Inline is not null).DistinctBy(l => l.Inline!.Id, StringComparer.Ordinal).ToList();
        if (carried.Count == 0) return new List<Item>();
        var ids = carried.Select(l => l.Inline!.Id).ToList();
        var stored = await db.Items.AsNoTracking().Where(i => i.ProjectId == projectId && ids.Contains(i.ItemId))
            .ToDictionaryAsync(i => i.ItemId, i => i.Json, StringComparer.Ordinal, ct);
        foreach (var id in ids)
            if (addedByGroup.TryGetValue((projectId, id), out var added)) stored.TryAdd(id, added);
        var now = time.GetUtcNow();
        var rows = new List<Item>();
        foreach (var line in carried)
        {
            var json = Json.Serialize(line.Inline!);
            if (!stored.TryGetValue(line.Inline!.Id, out var earlier))
                rows.Add(new Item { ProjectId = projectId, ItemId = line.Inline.Id, Pool = Pools.Live, Label = line.Inline.Label, Json = json, UpdatedAt = now });
            else if (earlier != json)
                conflicts.Add(new(line.Index, "item", "An item with this id is stored with other content or in another pool; items carried by outcomes are never changed."));
        }
        if (rows.Count > 0)
        {
            var limit = options.Value.Uploads.MaxItemsPerProject;
            var count = await db.Items.CountAsync(i => i.ProjectId == projectId, ct) + addedByGroup.Keys.Count(k => k.Item1 == projectId);
            if (count + rows.Count > limit)
                return Problems.Unprocessable($"A project may hold at most {limit} items; this batch's items would make {count + rows.Count}. Nothing was stored.");
        }
        return rows;
    }

    // ---- storing and applying: run by LiveCheckWriter, one transaction for a group of validated batches ----

    /// <summary>
    /// Stores a group of validated batches in one transaction, in queue order. A batch with an outcome id stored
    /// earlier (or by an earlier batch of the group) under a different body gets 409 and stores nothing; the new
    /// outcomes of the others are inserted, then applied to each annotator's monitor once for the whole group (in order
    /// of answered time then arrival, as if the batches had come one after another). Each batch's answer lists the
    /// statuses of the annotators it touched as of the commit. A concurrent node may store one of these ids, or move a
    /// monitor, between our read and our commit: the unique index or the monitor's revision then refuses the commit,
    /// and the writer stores each batch again on its own.
    /// </summary>
    internal async Task<IReadOnlyList<Outcome<LiveChecksStored>>> StoreTogetherAsync(IReadOnlyList<PendingLiveChecks> group, CancellationToken ct)
    {
        var now = time.GetUtcNow();
        await using var tx = await db.Database.BeginTransactionAsync(ct);
        var stored = await StoredAsync(group, ct);

        var results = new Outcome<LiveChecksStored>[group.Count];
        var accepted = new List<(int Batch, List<(ValidLine Line, LiveCheckRecord Row)> Fresh, int ItemsStored)>();
        var projects = new Dictionary<string, Project>(StringComparer.Ordinal);
        var rates = new Dictionary<string, double>(StringComparer.Ordinal);
        var webhooks = 0;
        var itemsAdded = new Dictionary<(string, string), string>();
        for (var b = 0; b < group.Count; b++)
        {
            var projectId = group[b].ProjectId;
            var conflicts = new List<LiveCheckError>();
            var fresh = new List<ValidLine>();
            foreach (var line in group[b].Lines)
            {
                if (!stored.TryGetValue((projectId, line.Input.OutcomeId), out var earlier)) fresh.Add(line);
                else if (earlier.WorkerRef != line.Input.WorkerRef || earlier.ItemId != line.Input.ItemId
                         || earlier.Label != line.Input.Label || earlier.AnsweredAt != line.AnsweredAt)
                    conflicts.Add(new(line.Index, "outcomeId", "An outcome with this id was stored earlier with a different body."));
            }
            var newItems = await NewLiveItemsAsync(projectId, group[b].Lines, conflicts, itemsAdded, ct);
            if (!newItems.Succeeded)
            {
                results[b] = newItems.Problem;
                continue;
            }
            if (conflicts.Count > 0)
            {
                results[b] = Problems.Conflict("Some outcome ids or items were stored earlier with different bodies; outcomes and their items cannot be changed, and nothing was stored.",
                    new Dictionary<string, object?> { ["errors"] = conflicts.OrderBy(c => c.Index).ToList() });
                continue;
            }
            // Items carried inline go in with the batch (SaveChanges, in this transaction), once for the group: a later
            // batch carrying the same new item finds it in itemsAdded and stores only its outcomes.
            db.Items.AddRange(newItems.Value);
            foreach (var item in newItems.Value) itemsAdded[(item.ProjectId, item.ItemId)] = item.Json;
            var rows = fresh.Select(l => new LiveCheckRecord
            {
                ProjectId = projectId, OutcomeId = l.Input.OutcomeId, WorkerRef = l.Input.WorkerRef, ItemId = l.Input.ItemId,
                Label = l.Input.Label, KnownLabel = l.KnownLabel, Wrong = l.Input.Label != l.KnownLabel,
                AnsweredAt = l.AnsweredAt, ReceivedAt = now,
            }).ToList();
            foreach (var row in rows) stored[(projectId, row.OutcomeId)] = row;
            accepted.Add((b, fresh.Zip(rows).ToList(), newItems.Value.Count));
        }
        // In queue order, so the ids (arrival order) follow the batches; the rows stay untracked.
        using var statements = new LiveCheckStatements(db);
        foreach (var (_, fresh, _) in accepted)
            foreach (var (_, row) in fresh) await statements.InsertAsync(row, ct);

        // Each annotator's monitor once for the group: their new outcomes of every batch together.
        var applied = new Dictionary<(string, string), LiveAnnotatorStatus>();
        var byWorker = accepted.SelectMany(a => a.Fresh.Select(f => (group[a.Batch].ProjectId, f.Line, f.Row)))
            .GroupBy(f => (f.ProjectId, f.Line.Input.WorkerRef)).ToList();
        var loaded = await LoadMonitorsAsync(byWorker.Select(g => g.Key).ToList(), ct);
        foreach (var worker in byWorker)
        {
            var release = worker.Select(f => f.Line.Release).MaxBy(r => r.Id)!;
            var rate = await RateAsync(worker.Key.ProjectId);
            var monitor = await MonitorAsync(worker.Key.ProjectId, release, rate, now, ct, loaded.GetValueOrDefault(worker.Key));
            // A refresher that ended before these outcomes arrived is applied first (it usually was, when it ended).
            await Refreshers.ApplyPendingAsync(db, monitor.Record, now, ct);
            var statusBefore = monitor.Record.Status;
            var log = new ApplyLog();
            var record = await ApplyAsync(monitor, worker.Select(f => f.Row).ToList(), rate, now, ct, log);
            webhooks += LiveStatusWebhooks.Add(db, await ProjectAsync(worker.Key.ProjectId), record, statusBefore, log.Changes, log.Rebuilt, log.Last!, now);
            applied[worker.Key] = new LiveAnnotatorStatus(record.WorkerRef, record.Status, record.Checks);
        }
        await FlushMonitorsAsync(statements, ct);
        await db.SaveChangesAsync(ct);
        await tx.CommitAsync(ct);
        if (webhooks > 0) outbox.Notify();

        foreach (var (b, fresh, itemsStored) in accepted)
        {
            var statuses = fresh.Select(f => f.Line.Input.WorkerRef).Distinct(StringComparer.Ordinal)
                .Select(w => applied[(group[b].ProjectId, w)]).ToList();
            results[b] = new LiveChecksStored(fresh.Count, group[b].Lines.Count - fresh.Count, statuses, itemsStored);
        }
        return results;

        async Task<Project> ProjectAsync(string id) =>
            projects.TryGetValue(id, out var known) ? known : projects[id] = await db.Projects.AsNoTracking().FirstAsync(p => p.Id == id, ct);

        // The project's forgetting rate as of this transaction, read once per project and group.
        async Task<double> RateAsync(string id) =>
            rates.TryGetValue(id, out var rate) ? rate : rates[id] = ProjectOperations.Settings(await ProjectAsync(id)).Live.ForgettingPerCheck;
    }

    /// <summary>Writes the monitors the group started or moved through the prepared statements; SaveChanges then writes the events.</summary>
    private async Task FlushMonitorsAsync(LiveCheckStatements statements, CancellationToken ct)
    {
        db.ChangeTracker.DetectChanges();
        foreach (var entry in db.ChangeTracker.Entries<LiveMonitorRecord>().ToList())
        {
            if (entry.State == EntityState.Added) await statements.InsertAsync(entry.Entity, ct);
            else if (entry.State == EntityState.Modified) await statements.UpdateAsync(entry.Entity, entry.Property(m => m.Revision).OriginalValue, ct);
            else continue;
            entry.State = EntityState.Unchanged;
        }
    }

    /// <summary>The group's outcome ids stored before, by (project, outcome id): one query per project.</summary>
    private async Task<Dictionary<(string, string), LiveCheckRecord>> StoredAsync(IReadOnlyList<PendingLiveChecks> group, CancellationToken ct)
    {
        var stored = new Dictionary<(string, string), LiveCheckRecord>();
        foreach (var project in group.GroupBy(b => b.ProjectId, StringComparer.Ordinal))
        {
            var ids = project.SelectMany(b => b.Lines).Select(l => l.Input.OutcomeId).Distinct(StringComparer.Ordinal).ToList();
            var rows = await db.LiveChecks.AsNoTracking().Where(c => c.ProjectId == project.Key && ids.Contains(c.OutcomeId)).ToListAsync(ct);
            foreach (var row in rows) stored[(row.ProjectId, row.OutcomeId)] = row;
        }
        return stored;
    }

    /// <summary>The monitor rows of the group's annotators (tracked), by (project, worker ref): one query per project.</summary>
    private async Task<Dictionary<(string, string), LiveMonitorRecord>> LoadMonitorsAsync(
        IReadOnlyList<(string ProjectId, string WorkerRef)> workers, CancellationToken ct)
    {
        var loaded = new Dictionary<(string, string), LiveMonitorRecord>();
        foreach (var project in workers.GroupBy(w => w.ProjectId, StringComparer.Ordinal))
        {
            var refs = project.Select(w => w.WorkerRef).ToList();
            foreach (var m in await db.LiveMonitors.Where(m => m.ProjectId == project.Key && refs.Contains(m.WorkerRef)).ToListAsync(ct))
                loaded[(m.ProjectId, m.WorkerRef)] = m;
        }
        return loaded;
    }

    /// <summary>
    /// The worker's monitor row; at their first live check, a new one in its start state: the count chart at zero, the
    /// model view at the release session's final belief, and the candidate rules chosen from that belief.
    /// </summary>
    private async Task<(LiveMonitorRecord Record, LiveModel Live)> MonitorAsync(
        string projectId, Releases.Release release, double rate, DateTimeOffset now, CancellationToken ct, LiveMonitorRecord? loaded = null)
    {
        var record = loaded ?? await db.LiveMonitors.FirstOrDefaultAsync(m => m.ProjectId == projectId && m.WorkerRef == release.WorkerRef, ct);
        if (record is not null && record.SessionId == release.SessionId)
            return (record, monitors.ModelOf(await versions.GetAsync(projectId, record.ModelVersion, ct)));

        // First live check, or a later release (a new onboarding) than the one the monitor continued: start afresh.
        var live = monitors.ModelOf(await versions.GetAsync(projectId, release.ModelVersion, ct));
        var belief = await ReleaseBeliefAsync(live, release.SessionId, rate, ct);
        var candidates = DriftCandidates.Choose(live.Version.Model, belief.Weights, live.Version.Settings.Gate.TargetError,
            live.Version.Settings.Live.CandidateRules);
        var start = live.Monitor.Start(candidates);
        if (record is null)
        {
            record = new LiveMonitorRecord
            {
                ProjectId = projectId, WorkerRef = release.WorkerRef, SessionId = release.SessionId, State = start.ToBytes(),
                Status = LiveStatusNames.Of(start.Status), StartedAt = now,
            };
            db.LiveMonitors.Add(record);
        }
        else
        {
            record.SessionId = release.SessionId;
            record.State = start.ToBytes();
            record.Status = LiveStatusNames.Of(start.Status);
            (record.Checks, record.Errors, record.Alarms) = (0, 0, 0);
            (record.LastAlarmAt, record.LastAlarm, record.LastCheckId) = (null, null, 0);
            record.StartedAt = now;
        }
        record.ModelVersion = release.ModelVersion;
        record.LastAnsweredAt = release.ReleasedAt;
        (record.Belief, record.ModelError, record.ModelRisk, record.ForgettingPerCheck) = (RefresherStart.Pack(belief.Weights), null, null, rate);
        record.TargetAnswerError = live.Monitor.Settings.TargetAnswerError;
        return (record, live);
    }

    /// <summary>The model view at release: the final belief of the release session, moving with <paramref name="rate"/>.</summary>
    private async Task<LiveBelief> ReleaseBeliefAsync(LiveModel live, string sessionId, double rate, CancellationToken ct) =>
        new(live.Version.Model, live.Version.Settings.Learner.Lapse, (await refreshers.EndBeliefAsync(live.Version, sessionId, ct)).Weights,
            new ForgettingRate(rate));

    /// <summary>
    /// Applies the new outcomes in order, to both views: each outcome first moves the model view (forgetting, then the
    /// answer when the item is one of the model's), whose predicted answer error then goes with the outcome to the
    /// monitor (<see cref="LiveMonitor.Apply"/>: above target it puts the annotator on watch). When one was answered before
    /// the last outcome already applied, or the project's forgetting rate changed, both are rebuilt from every outcome
    /// since the release instead (the log is the source of truth). Each status change is an event of the project's log.
    /// </summary>
    private async Task<LiveMonitorRecord> ApplyAsync(
        (LiveMonitorRecord Record, LiveModel Live) target, List<LiveCheckRecord> fresh, double rate,
        DateTimeOffset now, CancellationToken ct, ApplyLog? log = null)
    {
        var (record, live) = target;
        var monitor = live.Monitor;
        var (model, lapse, forgetting) = (live.Version.Model, live.Version.Settings.Learner.Lapse, new ForgettingRate(rate));
        var ordered = fresh.OrderBy(c => c.AnsweredAt).ThenBy(c => c.Id).ToList();
        var inOrder = (record.Checks == 0
            || (ordered[0].AnsweredAt, ordered[0].Id).CompareTo((record.LastAnsweredAt, record.LastCheckId)) > 0)
            && record.ForgettingPerCheck == rate
            // A monitor stored before the model view existed has no target yet: its views are built from the log.
            && record.TargetAnswerError > 0;
        var state = LiveMonitorState.FromBytes(record.State);
        var refreshersBetween = new Queue<EndedRefresher>();
        LiveBelief belief;
        if (inOrder)
        {
            // After a refresher the model view continues from its final belief.
            belief = record.Belief is { } saved
                ? LiveBelief.Restore(model, lapse, RefresherStart.Unpack(saved), forgetting)
                : new LiveBelief(model, lapse, (await refreshers.EndBeliefAsync(live.Version,
                    await refreshers.LatestEndedAsync(record.ProjectId, record.WorkerRef, record.SessionId, record.ModelVersion, ct), ct)).Weights, forgetting);
        }
        else
        {
            // Every outcome since the monitor started, the new ones included (they are saved in this transaction), and
            // the refreshers it has taken in since, each at the time it ended.
            ordered = await db.LiveChecks.Where(c => c.ProjectId == record.ProjectId && c.WorkerRef == record.WorkerRef && c.ReceivedAt >= record.StartedAt)
                .OrderBy(c => c.AnsweredAt).ThenBy(c => c.Id).ToListAsync(ct);
            refreshersBetween = new Queue<EndedRefresher>(await Refreshers.AppliedSinceAsync(db, record, ct));
            state = monitor.Start(state.CandidateRules);
            belief = await ReleaseBeliefAsync(live, record.SessionId, rate, ct);
            (record.LastAlarmAt, record.LastAlarm) = (null, null);
        }

        (double? modelError, double? risk) = (null, null);
        foreach (var check in ordered)
        {
            while (refreshersBetween.TryPeek(out var refresher) && refresher.EndedAt <= check.AnsweredAt)
            {
                var ended = refreshersBetween.Dequeue();
                state = LiveMonitor.AfterRefresher(state, ended.Outcome);
                belief = new LiveBelief(model, lapse, (await refreshers.EndBeliefAsync(live.Version, ended.SessionId, ct)).Weights, forgetting);
            }
            var before = state.Status;
            var engineCheck = live.Check(check);
            belief.Observe(engineCheck);
            (modelError, risk) = (belief.PredictedAnswerError(), live.Risk(belief));
            var signal = LiveModel.Signal(modelError.Value, risk.Value, monitor.Settings.TargetAnswerError);
            var step = monitor.Apply(state, engineCheck, signal);
            var causes = LiveCauses.Of(monitor.Settings, step, signal);
            state = step.State;
            if (step.Alarms != LiveAlarms.None)
                (record.LastAlarmAt, record.LastAlarm) = (check.AnsweredAt, LiveCauses.AlarmName(step.Alarms));
            if (state.Status != before)
                StatusChanged(record, new LiveStatusChange(LiveStatusNames.Of(before), LiveStatusNames.Of(state.Status), check.OutcomeId,
                    check.AnsweredAt, state.Checks, state.Errors, step.Alarms != LiveAlarms.None)
                {
                    Causes = causes, ModelPredictedError = modelError,
                    CandidateRule = step.AlarmedRule >= 0 ? live.Describe(step.AlarmedRule) : null,
                }, !inOrder, now, log);
        }

        while (refreshersBetween.TryDequeue(out var later))
        {
            state = LiveMonitor.AfterRefresher(state, later.Outcome);
            (belief, modelError, risk) = (new LiveBelief(model, lapse, (await refreshers.EndBeliefAsync(live.Version, later.SessionId, ct)).Weights, forgetting), null, null);
        }
        var last = ordered[^1];
        if (log is not null) (log.Rebuilt, log.Last) = (!inOrder, last);
        record.State = state.ToBytes();
        record.Status = LiveStatusNames.Of(state.Status);
        (record.Checks, record.Errors, record.Alarms) = (state.Checks, state.Errors, state.Alarms);
        (record.Belief, record.ModelError, record.ModelRisk, record.ForgettingPerCheck) = (RefresherStart.Pack(belief.Weights), modelError, risk, rate);
        record.TargetAnswerError = monitor.Settings.TargetAnswerError;
        (record.LastAnsweredAt, record.LastCheckId) = (last.AnsweredAt, last.Id);
        record.UpdatedAt = now;
        record.Revision++;
        return record;
    }

    /// <summary>What <see cref="ApplyAsync"/> did to one monitor: its status changes in order, whether it rebuilt the state, the last outcome applied.</summary>
    private sealed class ApplyLog
    {
        public List<LiveStatusChange> Changes { get; } = [];
        public bool Rebuilt { get; set; }
        public LiveCheckRecord? Last { get; set; }
    }

    /// <summary>A status change is an event of the project's log (and, through <see cref="ApplyLog"/>, a webhook delivery).</summary>
    private void StatusChanged(LiveMonitorRecord record, LiveStatusChange change, bool rebuilt, DateTimeOffset now, ApplyLog? log)
    {
        db.Events.Add(new SessionEvent
        {
            ProjectId = record.ProjectId, SessionId = record.SessionId, WorkerRef = record.WorkerRef,
            Type = EventTypes.LiveStatusChanged, At = now,
            DataJson = Json.Serialize(new
            {
                from = change.From, to = change.To, outcomeId = change.OutcomeId, answeredAt = change.AnsweredAt,
                checks = change.Checks, errors = change.Errors, alarm = change.Alarm, rebuilt,
                causes = change.Causes, candidateRule = change.CandidateRule, modelPredictedError = change.ModelPredictedError,
            }),
        });
        log?.Changes.Add(change);
    }

    /// <summary>Every monitored annotator of the project, by worker ref.</summary>
    public async Task<Outcome<LiveQualityView>> ListAsync(string projectId, CancellationToken ct)
    {
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        await refreshers.ApplyEndedAsync(projectId, ct);
        var rows = await db.LiveMonitors.AsNoTracking().Where(m => m.ProjectId == projectId).OrderBy(m => m.WorkerRef).ToListAsync(ct);
        return new LiveQualityView(rows.Select(View).ToList());
    }

    /// <summary>
    /// One page of the project's monitored annotators, by worker ref, optionally of one status; 400 for an unknown
    /// status, a foreign cursor or a limit out of range.
    /// </summary>
    public async Task<Outcome<LiveQualityView>> ListAsync(string projectId, string? status, string? cursor, int? limit, CancellationToken ct)
    {
        if (status is not null && !LiveStatusNames.All.Contains(status))
            return Problems.BadRequest($"'status' must be one of {string.Join(", ", LiveStatusNames.All)}.");
        var read = Cursor.Read(cursor, "cursor");
        if (read.Problem is { } badCursor) return badCursor;
        var size = Cursor.PageSize(limit);
        if (size.Problem is { } badLimit) return badLimit;
        var (after, take) = (read.Value, size.Value);
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        var query = db.LiveMonitors.AsNoTracking().Where(m => m.ProjectId == projectId);
        if (status is not null) query = query.Where(m => m.Status == status);
        if (after is not null) query = query.Where(m => string.Compare(m.WorkerRef, after) > 0);
        var rows = await query.OrderBy(m => m.WorkerRef).Take(take + 1).ToListAsync(ct);
        var page = rows.Take(take).Select(View).ToList();
        return new LiveQualityView(page, rows.Count > take ? Cursor.Encode(page[^1].WorkerRef) : null);
    }

    /// <summary>
    /// One annotator's live quality and outcome history, each outcome with the model view's predicted answer error after
    /// it, the model view's likely confusions (label names) and the candidate rules watched; 404 when they have no live checks.
    /// </summary>
    public async Task<Outcome<LiveAnnotatorHistory>> HistoryAsync(string projectId, string workerRef, CancellationToken ct)
    {
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        await refreshers.ApplyEndedAsync(projectId, workerRef, ct);
        var record = await db.LiveMonitors.AsNoTracking().FirstOrDefaultAsync(m => m.ProjectId == projectId && m.WorkerRef == workerRef, ct);
        if (record is null) return Problems.NotFound("No live checks of this worker in the project.");
        var replay = await ReplayAsync(record, ct);
        var outcomes = replay.Points.TakeLast(LiveQualityLimits.HistoryLength)
            .Select(p => new LiveOutcomeView(p.Check.OutcomeId, p.Check.ItemId, p.Check.Label, p.Check.KnownLabel, p.Check.Wrong,
                p.Check.AnsweredAt, p.Check.ReceivedAt)
            {
                ModelPredictedError = p.ModelError,
                Alarm = p.Step.Alarms != LiveAlarms.None ? LiveCauses.AlarmName(p.Step.Alarms) : null,
            })
            .ToList();
        var labels = replay.Live.Version.Model.Labels;
        var confusions = record.Belief is { } saved
            ? LiveBelief.Restore(replay.Live.Version.Model, replay.Live.Version.Settings.Learner.Lapse, RefresherStart.Unpack(saved), ForgettingRate.None)
                .LikelyConfusions().Select(c => new LikelyConfusionView(labels[c.TrueLabel], labels[c.GivenLabel], c.Rate)).ToList()
            : [];
        var watched = LiveMonitorState.FromBytes(record.State).CandidateRules.Select(r => new WatchedRuleView(r, replay.Live.Describe(r))).ToList();
        return new LiveAnnotatorHistory(View(record), outcomes) { LikelyConfusions = confusions, WatchedRules = watched };
    }

    /// <summary>One outcome as the monitor applied it: the step and the model view's predicted answer error after it.</summary>
    public sealed record ReplayPoint(LiveCheckRecord Check, LiveStep Step, double ModelError);

    /// <summary>The annotator's record replayed through both views, and the version's live model.</summary>
    public sealed record Replay(LiveModel Live, IReadOnlyList<ReplayPoint> Points, IReadOnlyList<EndedRefresher> Refreshers);

    /// <summary>
    /// Every outcome since the monitor started through both views, from the release, with the refreshers it took in at
    /// the times they ended, at the forgetting rate the stored view was moved with: the same steps as a rebuild, so the
    /// pictures and the history show what the monitor did.
    /// </summary>
    public async Task<Replay> ReplayAsync(LiveMonitorRecord record, CancellationToken ct)
    {
        var live = monitors.ModelOf(await versions.GetAsync(record.ProjectId, record.ModelVersion, ct));
        var (model, lapse, forgetting) = (live.Version.Model, live.Version.Settings.Learner.Lapse, new ForgettingRate(record.ForgettingPerCheck));
        var checks = await db.LiveChecks.AsNoTracking()
            .Where(c => c.ProjectId == record.ProjectId && c.WorkerRef == record.WorkerRef && c.ReceivedAt >= record.StartedAt)
            .OrderBy(c => c.AnsweredAt).ThenBy(c => c.Id).ToListAsync(ct);
        var ended = await Refreshers.AppliedSinceAsync(db, record, ct);
        var pending = new Queue<EndedRefresher>(ended);
        var state = live.Monitor.Start(LiveMonitorState.FromBytes(record.State).CandidateRules);
        var belief = await ReleaseBeliefAsync(live, record.SessionId, record.ForgettingPerCheck, ct);
        var points = new List<ReplayPoint>(checks.Count);
        foreach (var check in checks)
        {
            while (pending.TryPeek(out var refresher) && refresher.EndedAt <= check.AnsweredAt)
            {
                var done = pending.Dequeue();
                state = LiveMonitor.AfterRefresher(state, done.Outcome);
                belief = new LiveBelief(model, lapse, (await refreshers.EndBeliefAsync(live.Version, done.SessionId, ct)).Weights, forgetting);
            }
            var engineCheck = live.Check(check);
            belief.Observe(engineCheck);
            var error = belief.PredictedAnswerError();
            var step = live.Monitor.Apply(state, engineCheck, LiveModel.Signal(error, live.Risk(belief), live.Monitor.Settings.TargetAnswerError));
            state = step.State;
            points.Add(new ReplayPoint(check, step, error));
        }
        return new Replay(live, points, ended);
    }

    internal static LiveAnnotatorView View(LiveMonitorRecord m)
    {
        Interval? interval = m.Checks > 0 ? ProportionIntervals.Wilson(m.Errors, m.Checks) : null;
        var model = LiveViewReadings.Model(m.ModelError, m.ModelRisk, m.TargetAnswerError);
        var count = LiveViewReadings.Count(interval?.Low, interval?.High, m.TargetAnswerError);
        return new LiveAnnotatorView(
            m.WorkerRef, m.SessionId, m.ModelVersion, m.Status, m.Checks, m.Errors,
            m.Checks > 0 ? (double)m.Errors / m.Checks : null, interval?.Low, interval?.High,
            m.Alarms, m.LastAlarmAt, m.LastAlarm, m.StartedAt, m.LastAnsweredAt, m.TargetAnswerError, m.ModelError, m.ModelRisk,
            model, count, LiveViewReadings.Agree(model, count));
    }

    private static bool Same(LiveCheckInput a, LiveCheckInput b) =>
        a.WorkerRef == b.WorkerRef && a.ItemId == b.ItemId && a.Label == b.Label && Millisecond(a.AnsweredAt) == Millisecond(b.AnsweredAt)
        && (a.Item is null) == (b.Item is null)
        && (a.Item is null || Json.Serialize(a.Item.Definition(a.ItemId)) == Json.Serialize(b.Item!.Definition(b.ItemId)));

    /// <summary>UTC, to the millisecond: both stores keep that exactly, so a retry compares equal to what was stored.</summary>
    private static DateTimeOffset Millisecond(DateTimeOffset at)
    {
        var utc = at.ToUniversalTime();
        return new DateTimeOffset(utc.Ticks - (utc.Ticks % TimeSpan.TicksPerMillisecond), TimeSpan.Zero);
    }

    private static bool Printable(string s, int max) => s.Length > 0 && s.Length <= max && !s.Any(char.IsControl);
}
