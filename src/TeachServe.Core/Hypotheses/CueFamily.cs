namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Sparse signed rules over binary attributes (DESIGN 2.6): score = Σ w_j a_j with w_j ∈ {−1, 0, +1}, at most
/// <c>maxCues</c> non-zero, over the attributes most informative about the label; a cut on the score assigns one
/// class above and another below.
/// </summary>
public static class CueFamily
{
    public static void Generate(FamilyInput input, HypothesisPool pool)
    {
        var names = input.Items.SelectMany(i => i.Attributes ?? []).Distinct(StringComparer.Ordinal).Order(StringComparer.Ordinal).ToArray();
        var n = input.ItemCount;
        var present = new bool[n][];
        for (var i = 0; i < n; i++)
        {
            var set = input.Items[i].Attributes?.ToHashSet(StringComparer.Ordinal) ?? [];
            present[i] = names.Select(set.Contains).ToArray();
        }

        var candidates = Enumerable.Range(0, names.Length)
            .Select(j => (j, info: MutualInformation(present, j, input.Labels, input.LabelCount)))
            .OrderByDescending(t => t.info).ThenBy(t => t.j)
            .Take(Math.Max(1, input.Settings.CandidateCues))
            .Select(t => t.j).ToArray();
        var maxCues = Math.Clamp(input.Settings.MaxCues, 1, candidates.Length);
        var k = input.LabelCount;
        var scores = new int[n];
        foreach (var subset in Subsets(candidates.Length, maxCues))
        {
            var weight = Math.Pow(input.Settings.SimplicityBias, -(subset.Length - 1));
            for (var signs = 0; signs < 1 << subset.Length; signs++)
            {
                var negatives = 0;
                for (var i = 0; i < n; i++)
                {
                    var s = 0;
                    for (var t = 0; t < subset.Length; t++)
                    {
                        if (present[i][candidates[subset[t]]])
                        {
                            s += ((signs >> t) & 1) == 1 ? -1 : 1;
                        }
                    }

                    scores[i] = s;
                }

                for (var t = 0; t < subset.Length; t++)
                {
                    negatives += (signs >> t) & 1;
                }

                // Cuts between consecutive attainable scores −negatives … positives.
                for (var cut = -negatives; cut < subset.Length - negatives; cut++)
                {
                    for (var above = 0; above < k; above++)
                    {
                        for (var below = 0; below < k; below++)
                        {
                            if (above == below)
                            {
                                continue;
                            }

                            var predictions = new byte[n];
                            for (var i = 0; i < n; i++)
                            {
                                predictions[i] = (byte)(scores[i] > cut ? above : below);
                            }

                            pool.Add(predictions, weight);
                        }
                    }
                }
            }
        }
    }

    internal static double MutualInformation(bool[][] present, int attribute, int[] labels, int labelCount)
    {
        var n = labels.Length;
        var joint = new double[2, labelCount];
        for (var i = 0; i < n; i++)
        {
            joint[present[i][attribute] ? 1 : 0, labels[i]] += 1.0 / n;
        }

        var info = 0.0;
        for (var a = 0; a < 2; a++)
        {
            var pa = 0.0;
            for (var c = 0; c < labelCount; c++)
            {
                pa += joint[a, c];
            }

            for (var c = 0; c < labelCount; c++)
            {
                var pc = 0.0;
                for (var b = 0; b < 2; b++)
                {
                    pc += joint[b, c];
                }

                if (joint[a, c] > 0)
                {
                    info += joint[a, c] * Math.Log(joint[a, c] / (pa * pc));
                }
            }
        }

        return info;
    }

    private static IEnumerable<int[]> Subsets(int count, int maxSize)
    {
        for (var size = 1; size <= maxSize; size++)
        {
            var indices = Enumerable.Range(0, size).ToArray();
            while (true)
            {
                yield return (int[])indices.Clone();
                var i = size - 1;
                while (i >= 0 && indices[i] == count - size + i)
                {
                    i--;
                }

                if (i < 0)
                {
                    break;
                }

                indices[i]++;
                for (var j = i + 1; j < size; j++)
                {
                    indices[j] = indices[j - 1] + 1;
                }
            }
        }
    }
}
