namespace TeachServe.Core.Projects;

/// <summary>One item as a project owner supplies it (a line of <c>items.jsonl</c>).</summary>
public sealed record ItemDefinition
{
    public required string Id { get; init; }
    /// <summary><c>teach</c>, <c>test</c> or <c>live</c>.</summary>
    public required string Pool { get; init; }
    /// <summary>The true label, one of the project's label names.</summary>
    public required string Label { get; init; }
    public IReadOnlyDictionary<string, double>? Features { get; init; }
    public IReadOnlyList<string>? Attributes { get; init; }
    /// <summary>
    /// A vector the platform computed for the item (family <c>embedding</c>), or the server's text embedding (family
    /// <c>text</c>); the same length on every item, finite numbers.
    /// </summary>
    public float[]? Embedding { get; init; }
    public ItemContent? Content { get; init; }
    public string? Explanation { get; init; }
}

/// <summary>What the annotator sees.</summary>
public sealed record ItemContent
{
    public string? Text { get; init; }
    public string? ImageUrl { get; init; }
    public string? Svg { get; init; }
}

public static class Pools
{
    public const string Teach = "teach";
    public const string Test = "test";
    /// <summary>
    /// Known-answer items for live checks after release: stored with the project, never taught, tested or compiled
    /// into a model version.
    /// </summary>
    public const string Live = "live";
}

/// <summary>A project as loaded: settings plus items, already validated.</summary>
public sealed record ProjectDefinition(ProjectSettings Settings, IReadOnlyList<ItemDefinition> Items)
{
    /// <summary>The model that embedded the item texts (family <c>text</c>), recorded in the version summary.</summary>
    public string? EmbeddingModel { get; init; }
}
