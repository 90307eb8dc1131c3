using TeachServe.Core.Model;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Simulation;

/// <summary>
/// What a simulated annotator unlike the model perceives of each item: its numeric features and binary attributes
/// (as 0/1 columns), each column z-scored over all items, indexed like <see cref="ModelVersion.ItemIds"/>. Learners
/// built on it answer from these values only, never from the teacher's hypotheses.
/// </summary>
public sealed class ItemFeatures
{
    private readonly double[][] _values;

    private ItemFeatures(double[][] values, IReadOnlyList<string> names)
    {
        _values = values;
        Names = names;
    }

    /// <summary>Column names: feature names, then <c>attribute:NAME</c> for each attribute.</summary>
    public IReadOnlyList<string> Names { get; }

    public int Dimensions => Names.Count;

    public int Count => _values.Length;

    /// <summary>The z-scored values of item <paramref name="item"/> (model index).</summary>
    public ReadOnlySpan<double> Of(int item) => _values[item];

    /// <summary>
    /// Aligns the items' features and attributes with the model's item order. A column that is constant over all
    /// items carries nothing and is left out; an item missing a feature gets the column's mean (0 after scaling).
    /// </summary>
    /// <exception cref="ArgumentException">An item id of the model is not among the items, or no item has a feature or attribute.</exception>
    public static ItemFeatures From(ModelVersion model, IReadOnlyList<ItemDefinition> items)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(items);
        var byId = items.ToDictionary(i => i.Id, StringComparer.Ordinal);
        var ordered = model.ItemIds.Select(id => byId.TryGetValue(id, out var item) ? item : throw new ArgumentException($"Item '{id}' of the model version is not among the items.", nameof(items))).ToArray();
        var featureNames = ordered.SelectMany(i => i.Features?.Keys ?? []).Distinct(StringComparer.Ordinal).Order(StringComparer.Ordinal).ToList();
        var attributeNames = ordered.SelectMany(i => i.Attributes ?? []).Distinct(StringComparer.Ordinal).Order(StringComparer.Ordinal).ToList();
        var columns = new List<(string Name, double[] Values)>();
        foreach (var name in featureNames)
        {
            var present = ordered.Where(i => i.Features?.ContainsKey(name) == true).Select(i => i.Features![name]).ToArray();
            var mean = present.Average();
            columns.Add((name, [.. ordered.Select(i => i.Features is { } f && f.TryGetValue(name, out var v) ? v : mean)]));
        }

        foreach (var name in attributeNames)
        {
            columns.Add(("attribute:" + name, [.. ordered.Select(i => i.Attributes?.Contains(name) == true ? 1.0 : 0.0)]));
        }

        var kept = new List<(string Name, double[] Values)>();
        foreach (var (name, values) in columns)
        {
            var mean = values.Average();
            var sd = Math.Sqrt(values.Sum(v => (v - mean) * (v - mean)) / values.Length);
            if (sd > 1e-12)
            {
                kept.Add((name, [.. values.Select(v => (v - mean) / sd)]));
            }
        }

        if (kept.Count == 0)
        {
            throw new ArgumentException("Learners unlike the model need items with numeric features or binary attributes that vary, and these items have none.", nameof(items));
        }

        var rows = new double[ordered.Length][];
        for (var i = 0; i < rows.Length; i++)
        {
            rows[i] = [.. kept.Select(c => c.Values[i])];
        }

        return new ItemFeatures(rows, [.. kept.Select(c => c.Name)]);
    }
}
