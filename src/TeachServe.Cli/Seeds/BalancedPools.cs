using TeachServe.Core.Projects;

namespace TeachServe.Cli.Seeds;

internal static class BalancedPools
{
    /// <summary>
    /// Draws items until every label has <paramref name="teachPerLabel"/> teach and <paramref name="testPerLabel"/> test items
    /// (draws beyond a full quota are dropped), shuffles them and numbers them <c>prefix-001</c>… in the shuffled order,
    /// so an id says nothing about pool or label.
    /// </summary>
    /// <param name="draw">Returns one item with its label set; its id and pool are overwritten.</param>
    /// <param name="teachable">
    /// Whether an item may be a teaching example; one that may not (a close call whose reference label is disputed)
    /// goes to the test pool or is dropped. Null: every item may.
    /// </param>
    public static List<ItemDefinition> Draw(Random random, string idPrefix, IReadOnlyList<string> labels,
        int teachPerLabel, int testPerLabel, Func<Random, ItemDefinition> draw, Func<ItemDefinition, bool>? teachable = null)
    {
        var teach = labels.ToDictionary(l => l, _ => 0);
        var test = labels.ToDictionary(l => l, _ => 0);
        var needed = labels.Count * (teachPerLabel + testPerLabel);
        var items = new List<ItemDefinition>(needed);
        for (var attempts = 0; items.Count < needed; attempts++)
        {
            if (attempts > 1000 * needed)
                throw new InvalidOperationException($"the {idPrefix} generator rarely or never produces some label");
            var item = draw(random);
            if (teach[item.Label] < teachPerLabel && (teachable is null || teachable(item)))
            {
                teach[item.Label]++;
                items.Add(item with { Pool = Pools.Teach });
            }
            else if (test[item.Label] < testPerLabel)
            {
                test[item.Label]++;
                items.Add(item with { Pool = Pools.Test });
            }
        }
        // Fisher–Yates, written out so the order depends only on the seeded Random's documented sequence.
        for (var i = items.Count - 1; i > 0; i--)
        {
            var j = random.Next(i + 1);
            (items[i], items[j]) = (items[j], items[i]);
        }
        return [.. items.Select((item, i) => item with { Id = $"{idPrefix}-{i + 1:D3}" })];
    }
}
