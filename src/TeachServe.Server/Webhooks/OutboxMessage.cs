namespace TeachServe.Server.Webhooks;

/// <summary>A webhook waiting to be delivered (or delivered, or given up on), written in the same transaction as its cause.</summary>
public sealed class OutboxMessage
{
    public long Id { get; set; }
    /// <summary>
    /// The id receivers see (<c>webhook-id</c> and the CloudEvent's <c>id</c>), random per message and the same on every retry; null on
    /// rows written before it existed, which keep their row number so a retry matches what the receiver saw.
    /// </summary>
    public string? DeliveryId { get; set; }
    public required string ProjectId { get; set; }
    public string? SessionId { get; set; }
    public string? WorkerRef { get; set; }
    public required string EventType { get; set; }
    public required string Url { get; set; }
    public required string PayloadJson { get; set; }
    public required string State { get; set; }
    public int Attempts { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset NextAttemptAt { get; set; }
    public DateTimeOffset? DeliveredAt { get; set; }
    public string? LastError { get; set; }
}

public static class OutboxStates
{
    public const string Pending = "pending";
    public const string Delivered = "delivered";
    public const string GaveUp = "gave-up";
}
