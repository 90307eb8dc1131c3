namespace TeachServe.Server.LiveQuality;

/// <summary>One live-check outcome reported by the platform for a released annotator, as stored.</summary>
public sealed class LiveCheckRecord
{
    /// <summary>Arrival order: breaks ties between outcomes answered at the same instant.</summary>
    public long Id { get; set; }
    public required string ProjectId { get; set; }
    /// <summary>The platform's id of the outcome; a retry with the same id and body is the same outcome.</summary>
    public required string OutcomeId { get; set; }
    public required string WorkerRef { get; set; }
    public required string ItemId { get; set; }
    /// <summary>The label the annotator gave.</summary>
    public required string Label { get; set; }
    /// <summary>The item's known label when the outcome arrived.</summary>
    public required string KnownLabel { get; set; }
    public bool Wrong { get; set; }
    public DateTimeOffset AnsweredAt { get; set; }
    public DateTimeOffset ReceivedAt { get; set; }
}
