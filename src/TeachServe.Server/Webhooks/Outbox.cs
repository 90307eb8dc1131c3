using TeachServe.Server.Infrastructure;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Webhooks;

/// <summary>The <c>data</c> of a session's end event: what the platform needs to act on the decision.</summary>
public sealed record SessionEndedData(
    string ProjectId,
    string SessionId,
    string WorkerRef,
    string Phase,
    int ModelVersion,
    object? Evidence);

public static class Outbox
{
    /// <summary>128 random bits: unguessable, and says nothing about how many webhooks the server has sent.</summary>
    public static string NewDeliveryId() => "dlv_" + Ids.Base32(System.Security.Cryptography.RandomNumberGenerator.GetBytes(16));

    /// <summary>
    /// The delivery row for a project with a webhook (null without one), to commit with its cause. The body is
    /// serialised once here and stored, so every retry sends the same bytes under the same id.
    /// </summary>
    public static OutboxMessage? Message(Project project, string eventType, DateTimeOffset occurredAt, SessionEndedData data) =>
        Message(project, eventType, occurredAt, data.SessionId, data.WorkerRef, data);

    /// <summary>
    /// The delivery row of any event about one session and its worker (null for a project without a webhook); the
    /// CloudEvent's subject is the session id.
    /// </summary>
    public static OutboxMessage? Message<TData>(
        Project project, string eventType, DateTimeOffset occurredAt, string sessionId, string workerRef, TData data)
    {
        if (project.WebhookUrl is null) return null;
        var id = NewDeliveryId();
        var cloudEvent = new CloudEvent<TData>(
            id, WebhookEvents.SourceOf(project.Id), WebhookEvents.TypeOf(eventType), sessionId, occurredAt, data);
        return new OutboxMessage
        {
            ProjectId = project.Id,
            DeliveryId = id,
            SessionId = sessionId,
            WorkerRef = workerRef,
            EventType = eventType,
            Url = project.WebhookUrl,
            PayloadJson = Json.Serialize(cloudEvent),
            State = OutboxStates.Pending,
            CreatedAt = occurredAt,
            NextAttemptAt = occurredAt,
        };
    }
}
