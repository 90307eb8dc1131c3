namespace TeachServe.Core.Statistics;

/// <summary>Adjusting p-values for testing several hypotheses at once (e.g. several arms against control).</summary>
public static class MultipleTesting
{
    /// <summary>
    /// Holm's step-down adjusted p-values (Holm, Scand J Stat 6:65, 1979), as R's <c>p.adjust(p, "holm")</c>:
    /// with the m p-values sorted ascending, <c>p̃(i) = min(1, max over j ≤ i of (m − j + 1)·p(j))</c>,
    /// returned in the original order. Rejecting where <c>p̃ ≤ α</c> controls the family-wise error at α.
    /// </summary>
    /// <remarks>
    /// NaN entries (missing tests) stay NaN and do not count towards m, as R treats NA. An empty list gives
    /// an empty array. Other values outside [0, 1] throw <see cref="ArgumentOutOfRangeException"/>.
    /// </remarks>
    public static double[] Holm(IReadOnlyList<double> pValues)
    {
        ArgumentNullException.ThrowIfNull(pValues);
        var adjusted = new double[pValues.Count];
        var present = new List<int>(pValues.Count);
        for (var i = 0; i < pValues.Count; i++)
        {
            var p = pValues[i];
            if (double.IsNaN(p))
            {
                adjusted[i] = double.NaN;
                continue;
            }

            Guard.Probability(p, nameof(pValues));
            present.Add(i);
        }

        // A stable sort keeps ties in input order; ties get equal adjusted values either way.
        var order = present.OrderBy(i => pValues[i]).ToArray();
        var m = order.Length;
        var running = 0.0;
        for (var rank = 0; rank < m; rank++)
        {
            running = Math.Max(running, Math.Min(1.0, (m - rank) * pValues[order[rank]]));
            adjusted[order[rank]] = running;
        }

        return adjusted;
    }
}
