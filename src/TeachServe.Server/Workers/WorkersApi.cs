using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Workers;

public sealed record WorkerErased(long AuditId, string SubjectHash, int Sessions, int Events, int Releases, int Webhooks);

public sealed record AuditView(long Id, string Action, string SubjectHash, System.Text.Json.Nodes.JsonNode? Details, DateTimeOffset At);

public sealed record AuditPage(IReadOnlyList<AuditView> Entries, string? Next);

public static class WorkersApi
{
    public const string EraseAction = "worker.erased";

    public static RouteGroupBuilder MapWorkers(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}").WithTags("Privacy");
        group.MapDelete("/workers/{workerRef}", EraseWorker).RequireKey(KeyRole.Owner).WithName("eraseWorker")
            .Problem(StatusCodes.Status400BadRequest, "'workerRef' is longer than any stored one.")
            .WithSummary("Erase one worker's sessions, events, releases and webhooks (privacy request); records an audit entry.");
        group.MapGet("/audit", ListAudit).RequireKey(KeyRole.Owner).WithName("listAudit")
            .Problem(StatusCodes.Status400BadRequest, "'cursor' or 'limit' is not valid.")
            .WithSummary("Audit entries of the project, oldest first.");
        return group;
    }

    public static async Task<Results<Ok<WorkerErased>, ProblemHttpResult>> EraseWorker(
        string projectId, string workerRef, TeachServeDb db, TimeProvider time, SessionStateCache cache, AuditSubjects subjects,
        ILoggerFactory logs, CancellationToken ct)
    {
        if (workerRef.Length > SessionLimits.WorkerRefLength)
            return Problems.BadRequest($"A workerRef has at most {SessionLimits.WorkerRefLength} characters.");
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");

        var subject = subjects.Of(projectId, workerRef);
        var now = time.GetUtcNow();
        await using var tx = await db.Database.BeginTransactionAsync(ct);
        var sessionIds = await db.Sessions.Where(s => s.ProjectId == projectId && s.WorkerRef == workerRef)
            .Select(s => s.Id).ToListAsync(ct);
        var events = await db.Events.Where(e => e.ProjectId == projectId && e.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        var releases = await db.Releases.Where(r => r.ProjectId == projectId && r.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        var webhooks = await db.Outbox.Where(m => m.ProjectId == projectId && m.WorkerRef == workerRef).ExecuteDeleteAsync(ct);
        var sessions = await db.Sessions.Where(s => s.ProjectId == projectId && s.WorkerRef == workerRef).ExecuteDeleteAsync(ct);

        var details = Json.Serialize(new { sessions, events, releases, webhooks });
        var audit = new AuditEntry { ProjectId = projectId, Action = EraseAction, SubjectHash = subject, DetailsJson = details, At = now };
        db.Audit.Add(audit);
        // The log itself says that something was removed, and from whom only by hash.
        db.Events.Add(new SessionEvent
        {
            ProjectId = projectId, Type = EventTypes.WorkerErased, At = now,
            DataJson = Json.Serialize(new { subjectHash = subject, sessions, events, releases, webhooks }),
        });
        await db.SaveChangesAsync(ct);
        await tx.CommitAsync(ct);
        foreach (var id in sessionIds) cache.Evict(id);
        await ErasureScrub.RunAsync(db, logs.CreateLogger(typeof(ErasureScrub)), ct);

        return TypedResults.Ok(new WorkerErased(audit.Id, subject, sessions, events, releases, webhooks));
    }

    public static async Task<Results<Ok<AuditPage>, ProblemHttpResult>> ListAudit(
        string projectId, string? cursor, int? limit, TeachServeDb db, CancellationToken ct)
    {
        var after = Cursor.DecodeNumber(cursor, "cursor") ?? 0;
        var take = Cursor.Limit(limit);
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        var rows = await db.Audit.AsNoTracking().Where(a => a.ProjectId == projectId && a.Id > after)
            .OrderBy(a => a.Id).Take(take + 1).ToListAsync(ct);
        var page = rows.Take(take)
            .Select(a => new AuditView(a.Id, a.Action, a.SubjectHash, System.Text.Json.Nodes.JsonNode.Parse(a.DetailsJson), a.At))
            .ToList();
        return TypedResults.Ok(new AuditPage(page, rows.Count > take ? Cursor.Encode(page[^1].Id.ToString(System.Globalization.CultureInfo.InvariantCulture)) : null));
    }
}
