namespace TeachServe.Core.Statistics;

/// <summary>Chance-corrected agreement between raters (e.g. an annotator against the gold labels).</summary>
public static class Agreement
{
    /// <summary>
    /// Cohen's κ (Educ Psychol Meas 20:37, 1960) for a square confusion table of two raters
    /// (rows: rater A's class, columns: rater B's class): <c>κ = (po − pe)/(1 − pe)</c>, with po the observed
    /// agreement and pe the agreement expected from the margins.
    /// </summary>
    /// <returns>κ in [−1, 1]; NaN for an empty table, or when pe = 1 (both raters always use the same one class).</returns>
    /// <exception cref="ArgumentException">The table is not square or is 0 × 0.</exception>
    /// <exception cref="ArgumentOutOfRangeException">A count is negative.</exception>
    public static double CohensKappa(int[,] table)
    {
        ArgumentNullException.ThrowIfNull(table);
        var k = table.GetLength(0);
        if (k == 0 || table.GetLength(1) != k)
        {
            throw new ArgumentException("The table must be square with at least one class.", nameof(table));
        }

        var rows = new double[k];
        var columns = new double[k];
        double total = 0, diagonal = 0;
        for (var i = 0; i < k; i++)
        {
            for (var j = 0; j < k; j++)
            {
                var count = table[i, j];
                if (count < 0)
                {
                    throw new ArgumentOutOfRangeException(nameof(table), count, "Counts must not be negative.");
                }

                rows[i] += count;
                columns[j] += count;
                total += count;
                if (i == j)
                {
                    diagonal += count;
                }
            }
        }

        if (total == 0)
        {
            return double.NaN;
        }

        var chance = 0.0;
        for (var i = 0; i < k; i++)
        {
            chance += rows[i] / total * (columns[i] / total);
        }

        return chance >= 1 ? double.NaN : ((diagonal / total) - chance) / (1 - chance);
    }
}
