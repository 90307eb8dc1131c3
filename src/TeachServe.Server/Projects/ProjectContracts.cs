using TeachServe.Core.Projects;

namespace TeachServe.Server.Projects;

/// <summary>Answer to project creation: the only time the two keys are shown.</summary>
public sealed record ProjectCreated(string ProjectId, string Name, string OwnerKey, string EmbedKey);

public sealed record ProjectView(
    string ProjectId,
    string Name,
    ProjectSettings Settings,
    WebhookView? ReleaseWebhook,
    ItemCounts Items,
    int? LatestReadyVersion,
    DateTimeOffset CreatedAt,
    DateTimeOffset UpdatedAt);

/// <summary>The webhook as shown back: the secret is write-only.</summary>
public sealed record WebhookView(string Url, bool SecretSet);

/// <summary>Items per pool; <c>live</c> items are known answers for live checks, never compiled into a version.</summary>
public sealed record ItemCounts(
    int Teach, int Test,
    [property: System.ComponentModel.Description("Items in pool 'live': known answers for live checks, never taught, tested or compiled.")] int Live = 0);

/// <summary>Where and how release decisions are pushed to the platform.</summary>
public sealed record ReleaseWebhookSettings
{
    public required string Url { get; init; }
    public required string Secret { get; init; }
}
