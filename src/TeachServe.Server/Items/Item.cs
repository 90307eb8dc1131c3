namespace TeachServe.Server.Items;

/// <summary>One uploaded item of a project; <see cref="Json"/> is the full item as the owner sent it.</summary>
public sealed class Item
{
    public required string ProjectId { get; set; }
    public required string ItemId { get; set; }
    public required string Pool { get; set; }
    public required string Label { get; set; }
    public required string Json { get; set; }
    /// <summary>Family <c>text</c>: the embedding of the item's text (float32, little-endian), computed once at upload.</summary>
    public byte[]? Embedding { get; set; }
    /// <summary>The model that computed <see cref="Embedding"/>; a different model embeds the item again.</summary>
    public string? EmbeddingModel { get; set; }
    public DateTimeOffset UpdatedAt { get; set; }
}
