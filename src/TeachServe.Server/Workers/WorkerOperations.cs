using System.Globalization;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Workers;

/// <summary>Privacy operations on one worker's data, and the audit entries that record them. Problems are returned, not thrown.</summary>
public sealed class WorkerOperations(TeachServeDb db, TimeProvider time, SessionStateCache cache, AuditSubjects subjects, ILoggerFactory logs)
{
    public const string EraseAction = "worker.erased";

    /// <summary>Erases the worker's sessions, events, releases, webhooks, live checks, live monitor and refresher starts in one transaction, and records an audit entry.</summary>
    public async Task<Outcome<WorkerErased>> EraseAsync(string projectId, string workerRef, CancellationToken ct)
    {
        if (workerRef.Length > SessionLimits.WorkerRefLength)
            return Problems.BadRequest($"A workerRef has at most {SessionLimits.WorkerRefLength} characters.");
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;

        var subject = subjects.Of(projectId, workerRef);
        var now = time.GetUtcNow();
        await using var tx = await db.Database.BeginTransactionAsync(ct);
        var sessionIds = await db.Sessions.Where(s => s.ProjectId == projectId && s.WorkerRef == workerRef)
            .Select(s => s.Id).ToListAsync(ct);
        var events = await db.Events.Where(e => e.ProjectId == projectId && e.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        var releases = await db.Releases.Where(r => r.ProjectId == projectId && r.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        var webhooks = await db.Outbox.Where(m => m.ProjectId == projectId && m.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        // Refresher starts hold the worker's belief; the foreign key would remove them with the sessions, but erasure says so itself.
        await db.RefresherStarts.Where(r => r.ProjectId == projectId && r.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        var sessions = await db.Sessions.Where(s => s.ProjectId == projectId && s.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        var liveChecks = await db.LiveChecks.Where(c => c.ProjectId == projectId && c.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        await db.LiveMonitors.Where(m => m.ProjectId == projectId && m.WorkerRef == workerRef).ExecuteDeleteAsync(ct);

        var details = Json.Serialize(new { sessions, events, releases, webhooks, liveChecks });
        var audit = new AuditEntry { ProjectId = projectId, Action = EraseAction, SubjectHash = subject, DetailsJson = details, At = now };
        db.Audit.Add(audit);
        // The log itself says that something was removed, and from whom only by hash.
        db.Events.Add(new SessionEvent
        {
            ProjectId = projectId, Type = EventTypes.WorkerErased, At = now,
            DataJson = Json.Serialize(new { subjectHash = subject, sessions, events, releases, webhooks, liveChecks }),
        });
        await db.SaveChangesAsync(ct);
        await tx.CommitAsync(ct);
        foreach (var id in sessionIds) cache.Evict(id);
        await ErasureScrub.RunAsync(db, logs.CreateLogger(typeof(ErasureScrub)), ct);

        return new WorkerErased(audit.Id, subject, sessions, events, releases, webhooks, liveChecks);
    }

    /// <summary>Audit entries after the cursor, oldest first; 400 for a foreign cursor or a limit out of range.</summary>
    public async Task<Outcome<AuditPage>> ListAuditAsync(string projectId, string? cursor, int? limit, CancellationToken ct)
    {
        var request = Cursor.ReadNumberPage(cursor, "cursor", limit);
        if (request.Problem is { } badPage) return badPage;
        var (after, take) = request.Value;
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        var rows = await db.Audit.AsNoTracking().Where(a => a.ProjectId == projectId && a.Id > after)
            .OrderBy(a => a.Id).Take(take + 1).ToListAsync(ct);
        var page = rows.Take(take)
            .Select(a => new AuditView(a.Id, a.Action, a.SubjectHash, System.Text.Json.Nodes.JsonNode.Parse(a.DetailsJson), a.At))
            .ToList();
        return new AuditPage(page, rows.Count > take ? Cursor.Encode(page[^1].Id.ToString(CultureInfo.InvariantCulture)) : null);
    }
}
