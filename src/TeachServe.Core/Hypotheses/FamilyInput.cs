using TeachServe.Core.Projects;

namespace TeachServe.Core.Hypotheses;

/// <summary>The items of a project in model order (teach pool first, then test pool) with their label indices.</summary>
public sealed class FamilyInput
{
    public FamilyInput(IReadOnlyList<ItemDefinition> items, int[] labels, int labelCount, FamilySettings settings)
    {
        Items = items;
        Labels = labels;
        LabelCount = labelCount;
        Settings = settings;
    }

    public IReadOnlyList<ItemDefinition> Items { get; }
    public int[] Labels { get; }
    public int LabelCount { get; }
    public FamilySettings Settings { get; }
    public int ItemCount => Items.Count;

    /// <summary>Feature names (ordinal order) and the item × feature matrix, each column standardised to mean 0, sd 1.</summary>
    public (string[] Names, double[][] Rows) StandardisedFeatures()
    {
        var names = Items.SelectMany(i => i.Features?.Keys ?? Enumerable.Empty<string>())
            .Distinct(StringComparer.Ordinal).Order(StringComparer.Ordinal).ToArray();
        var rows = new double[ItemCount][];
        for (var i = 0; i < ItemCount; i++)
        {
            rows[i] = new double[names.Length];
            var features = Items[i].Features;
            for (var j = 0; j < names.Length; j++)
            {
                rows[i][j] = features is not null && features.TryGetValue(names[j], out var v) ? v : 0.0;
            }
        }

        for (var j = 0; j < names.Length; j++)
        {
            var mean = rows.Average(r => r[j]);
            var sd = Math.Sqrt(rows.Sum(r => (r[j] - mean) * (r[j] - mean)) / Math.Max(1, ItemCount - 1));
            if (!(sd > 1e-12))
            {
                sd = 1.0;
            }

            foreach (var r in rows)
            {
                r[j] = (r[j] - mean) / sd;
            }
        }

        return (names, rows);
    }

    /// <summary>Raw (unstandardised) values of one feature.</summary>
    public double[] RawFeature(string name) =>
        Items.Select(i => i.Features is not null && i.Features.TryGetValue(name, out var v) ? v : 0.0).ToArray();
}
