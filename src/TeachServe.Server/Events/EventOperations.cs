using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Events;

/// <summary>A project's event log from just after event <see cref="After"/> on, checked and ready to be written.</summary>
public sealed record EventLog(string ProjectId, long After);

/// <summary>Exporting a project's append-only event log as JSON Lines: for the API and the owner console alike.</summary>
public sealed class EventOperations(TeachServeDb db)
{
    public const string MediaType = "application/x-ndjson";

    /// <summary>The log of the project from <paramref name="after"/> on, or why not (a negative event id, no such project).</summary>
    public async Task<Outcome<EventLog>> OpenAsync(string projectId, long? after, CancellationToken ct)
    {
        if (after is < 0) return Problems.BadRequest("'after' must be an event id (0 or more).");
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        return new EventLog(projectId, after ?? 0);
    }

    /// <summary>Streams the log, oldest first, one JSON object a line, flushing after each event.</summary>
    public async Task WriteJsonLinesAsync(EventLog log, Stream body, CancellationToken ct)
    {
        var events = db.Events.AsNoTracking()
            .Where(e => e.ProjectId == log.ProjectId && e.Id > log.After)
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
    }
}
