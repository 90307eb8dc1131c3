namespace TeachServe.Core.Hypotheses;

/// <summary>One-feature thresholds at midpoints between observed values, in both directions (DESIGN 2.6).</summary>
public static class StumpFamily
{
    /// <summary>At most this many thresholds per feature (quantile-spaced midpoints beyond it).</summary>
    public const int MaxThresholdsPerFeature = 64;

    public static void Generate(FamilyInput input, HypothesisPool pool)
    {
        var names = input.Items.SelectMany(i => i.Features?.Keys ?? Enumerable.Empty<string>())
            .Distinct(StringComparer.Ordinal).Order(StringComparer.Ordinal).ToArray();
        var k = input.LabelCount;
        foreach (var name in names)
        {
            var values = input.RawFeature(name);
            foreach (var threshold in Thresholds(values))
            {
                // Every ordered pair of classes for the two sides: for two labels, both directions.
                for (var above = 0; above < k; above++)
                {
                    for (var below = 0; below < k; below++)
                    {
                        if (above == below)
                        {
                            continue;
                        }

                        pool.Add(values.Select(v => v > threshold ? (byte)above : (byte)below).ToArray(), 1.0);
                    }
                }
            }
        }
    }

    internal static IEnumerable<double> Thresholds(double[] values)
    {
        var distinct = values.Distinct().Order().ToArray();
        var midpoints = new double[Math.Max(0, distinct.Length - 1)];
        for (var i = 0; i + 1 < distinct.Length; i++)
        {
            midpoints[i] = 0.5 * (distinct[i] + distinct[i + 1]);
        }

        if (midpoints.Length <= MaxThresholdsPerFeature)
        {
            return midpoints;
        }

        return Enumerable.Range(0, MaxThresholdsPerFeature)
            .Select(i => midpoints[(int)Math.Round((double)i * (midpoints.Length - 1) / (MaxThresholdsPerFeature - 1))])
            .Distinct();
    }
}
