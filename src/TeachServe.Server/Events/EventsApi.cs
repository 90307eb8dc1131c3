using System.Text.Json;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Events;

public static class EventsApi
{
    public static RouteGroupBuilder MapEvents(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/events").WithTags("Events");
        group.MapGet("/", ExportEvents).RequireKey(KeyRole.Owner).WithName("exportEvents")
            .Problem(StatusCodes.Status400BadRequest, "'after' is not an event id (0 or more).")
            .Produces(StatusCodes.Status200OK, contentType: "application/x-ndjson")
            .WithSummary("The project's append-only event log as JSON Lines, oldest first, streamed; 'after' resumes from an event id.");
        return group;
    }

    public static async Task<Results<PushStreamHttpResult, ProblemHttpResult>> ExportEvents(
        string projectId, long? after, TeachServeDb db, CancellationToken ct)
    {
        if (after is < 0) return Problems.BadRequest("'after' must be an event id (0 or more).");
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        var from = after ?? 0;
        return TypedResults.Stream(async body =>
        {
            var events = db.Events.AsNoTracking()
                .Where(e => e.ProjectId == projectId && e.Id > from)
                .OrderBy(e => e.Id)
                .AsAsyncEnumerable();
            await using var writer = new Utf8JsonWriter(body, new JsonWriterOptions { Encoder = Json.Options.Encoder });
            var newline = "\n"u8.ToArray();
            await foreach (var e in events.WithCancellation(ct))
            {
                writer.WriteStartObject();
                writer.WriteNumber("id", e.Id);
                writer.WriteString("type", e.Type);
                if (e.SessionId is not null) writer.WriteString("sessionId", e.SessionId);
                if (e.WorkerRef is not null) writer.WriteString("workerRef", e.WorkerRef);
                if (e.Step is { } step) writer.WriteNumber("step", step);
                writer.WriteString("at", e.At);
                writer.WritePropertyName("data");
                writer.WriteRawValue(e.DataJson, skipInputValidation: true);
                writer.WriteEndObject();
                await writer.FlushAsync(ct);
                writer.Reset();
                await body.WriteAsync(newline, ct);
            }
        }, "application/x-ndjson");
    }
}
