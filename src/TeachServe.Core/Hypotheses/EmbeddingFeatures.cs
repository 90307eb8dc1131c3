using System.Globalization;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Turns the item vectors of a <c>text</c> or <c>embedding</c> project into numeric features: the scores on the
/// first <see cref="FamilySettings.Dimensions"/> principal components, named <c>pc01</c>, <c>pc02</c>, … The linear
/// family (and the simulated learners that read features) then work on these as on any hand-made features.
/// </summary>
public static class EmbeddingFeatures
{
    public const int DefaultDimensions = 32;
    public const int MinDimensions = 2;
    public const int MaxDimensions = 128;

    /// <summary>Longest vector an item may carry.</summary>
    public const int MaxVectorLength = 4096;

    /// <summary>Longest item text the <c>text</c> family embeds, in characters: at most one token per character plus two markers stays within the model's 512 positions.</summary>
    public const int MaxTextLength = 500;

    /// <summary>The items with <see cref="ItemDefinition.Features"/> set to their component scores; other families' items unchanged.</summary>
    public static IReadOnlyList<ItemDefinition> Project(FamilySettings family, IReadOnlyList<ItemDefinition> items) =>
        Reduce(family, items).Items;

    /// <summary>As <see cref="Project"/>, with the share of the vectors' variance the kept components explain.</summary>
    public static (IReadOnlyList<ItemDefinition> Items, double ExplainedVariance) Reduce(FamilySettings family, IReadOnlyList<ItemDefinition> items)
    {
        ArgumentNullException.ThrowIfNull(family);
        ArgumentNullException.ThrowIfNull(items);
        if (!FamilyKinds.UsesVectors(family.Kind)) return (items, double.NaN);
        var vectors = items.Select(i => i.Embedding ?? throw new ArgumentException($"Item '{i.Id}' has no vector.", nameof(items))).ToArray();
        var (scores, explained) = PrincipalComponents.Project(vectors, family.Dimensions, (ulong)family.Seed);
        var width = scores.Length == 0 ? 0 : scores[0].Length;
        var names = Enumerable.Range(1, width).Select(j => "pc" + j.ToString("00", CultureInfo.InvariantCulture)).ToArray();
        var projected = new ItemDefinition[items.Count];
        for (var i = 0; i < items.Count; i++)
        {
            var features = new Dictionary<string, double>(width, StringComparer.Ordinal);
            for (var j = 0; j < width; j++) features[names[j]] = scores[i][j];
            projected[i] = items[i] with { Features = features };
        }
        return (projected, explained);
    }
}
