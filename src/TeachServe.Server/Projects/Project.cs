namespace TeachServe.Server.Projects;

/// <summary>A project row: its settings document and the hashes of its two keys.</summary>
public sealed class Project
{
    public required string Id { get; set; }
    public required string Name { get; set; }
    /// <summary>The <c>project.json</c> settings (without the webhook), as stored JSON.</summary>
    public required string SettingsJson { get; set; }
    public required byte[] OwnerKeyHash { get; set; }
    public required byte[] EmbedKeyHash { get; set; }
    public string? WebhookUrl { get; set; }
    /// <summary>Encrypted at rest (<see cref="Webhooks.WebhookSecrets"/>); rows of older servers may still hold plaintext.</summary>
    public string? WebhookSecret { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    public DateTimeOffset UpdatedAt { get; set; }
}
