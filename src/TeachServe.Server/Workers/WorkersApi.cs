using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;

namespace TeachServe.Server.Workers;

public sealed record WorkerErased(long AuditId, string SubjectHash, int Sessions, int Events, int Releases, int Webhooks, int LiveChecks);

public sealed record AuditView(long Id, string Action, string SubjectHash, System.Text.Json.Nodes.JsonNode? Details, DateTimeOffset At);

public sealed record AuditPage(IReadOnlyList<AuditView> Entries, string? Next);

/// <summary>The privacy routes; <see cref="WorkerOperations"/> does the work.</summary>
public static class WorkersApi
{
    public static RouteGroupBuilder MapWorkers(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}").WithTags("Privacy");
        group.MapDelete("/workers/{workerRef}", EraseWorker).RequireKey(KeyRole.Owner).WithName("eraseWorker")
            .Problem(StatusCodes.Status400BadRequest, "'workerRef' is longer than any stored one.")
            .WithSummary("Erase one worker's sessions, events, releases, webhooks, live checks and live-quality state (privacy request); records an audit entry.");
        group.MapGet("/audit", ListAudit).RequireKey(KeyRole.Owner).WithName("listAudit")
            .Problem(StatusCodes.Status400BadRequest, "'cursor' or 'limit' is not valid.")
            .WithSummary("Audit entries of the project, oldest first.");
        return group;
    }

    public static async Task<Results<Ok<WorkerErased>, ProblemHttpResult>> EraseWorker(
        string projectId, string workerRef, WorkerOperations workers, CancellationToken ct) =>
        (await workers.EraseAsync(projectId, workerRef, ct)).Answer(TypedResults.Ok);

    public static async Task<Results<Ok<AuditPage>, ProblemHttpResult>> ListAudit(
        string projectId, string? cursor, int? limit, WorkerOperations workers, CancellationToken ct) =>
        (await workers.ListAuditAsync(projectId, cursor, limit, ct)).Answer(TypedResults.Ok);
}
