namespace TeachServe.Core.Hypotheses;

/// <summary>Uploaded predictions (hypothesis × item) for owners who build hypotheses elsewhere (DESIGN 2.6).</summary>
public static class TableFamily
{
    public static void Generate(FamilyInput input, HypothesisPool pool, IReadOnlyList<string> labelNames)
    {
        var labelIndex = labelNames.Select((name, i) => (name, i)).ToDictionary(t => t.name, t => t.i, StringComparer.Ordinal);
        foreach (var row in input.Settings.Table ?? [])
        {
            var predictions = new byte[input.ItemCount];
            for (var i = 0; i < input.ItemCount; i++)
            {
                predictions[i] = row.Predictions.TryGetValue(input.Items[i].Id, out var label) && labelIndex.TryGetValue(label, out var li)
                    ? (byte)li
                    : (byte)input.Labels[i];
            }

            pool.Add(predictions, row.Prior);
        }
    }
}
