using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Webhooks;

/// <summary>The payload the platform receives when a session ends.</summary>
public sealed record SessionEndedWebhook(
    string Type,
    string ProjectId,
    string SessionId,
    string WorkerRef,
    string Phase,
    int ModelVersion,
    object? Evidence,
    DateTimeOffset OccurredAt);

public static class Outbox
{
    /// <summary>Adds a delivery to the caller's unit of work, so it commits (or not) with its cause.</summary>
    public static void Enqueue(TeachServeDb db, Project project, string sessionId, string workerRef, SessionEndedWebhook payload)
    {
        if (Message(project, sessionId, workerRef, payload) is { } message) db.Outbox.Add(message);
    }

    /// <summary>The delivery row for a project with a webhook (null without one), for a unit of work built elsewhere.</summary>
    public static OutboxMessage? Message(Project project, string sessionId, string workerRef, SessionEndedWebhook payload) =>
        project.WebhookUrl is null ? null : new OutboxMessage
        {
            ProjectId = project.Id,
            SessionId = sessionId,
            WorkerRef = workerRef,
            EventType = payload.Type,
            Url = project.WebhookUrl,
            PayloadJson = Json.Serialize(payload),
            State = OutboxStates.Pending,
            CreatedAt = payload.OccurredAt,
            NextAttemptAt = payload.OccurredAt,
        };
}
