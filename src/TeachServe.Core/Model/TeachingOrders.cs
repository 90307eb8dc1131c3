namespace TeachServe.Core.Model;

/// <summary>The item orders that do not depend on an annotator's answers (DESIGN 2.4).</summary>
public static class TeachingOrders
{
    /// <summary>
    /// The non-adaptive greedy of Singla et al. (ICML 2014): repeatedly the teach item maximising
    /// Σ_h Q(h|A)·err(h)·(1 − ℓ(h,x)), with Q(h|A) = P0(h)·Π ℓ. Stops early once no item has positive gain.
    /// </summary>
    public static int[] StochasticGreedy(ModelVersion model, double q, int length, CancellationToken cancellationToken = default)
    {
        var m = model.HypothesisCount;
        var learner = model.Prior.ToArray();
        var shown = new bool[model.TeachCount];
        var weights = new float[MistakeKernel.PaddedLength(m)];
        var sequence = new List<int>(length);
        for (var step = 0; step < length; step++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            var item = NextGreedy(model, learner, shown, weights, out var gain);
            if (item < 0 || gain <= 0)
            {
                break;
            }

            sequence.Add(item);
            shown[item] = true;
            ApplyShown(model, learner, item, q);
        }

        return [.. sequence];
    }

    /// <summary>
    /// One step of the stochastic-greedy rule given the learner's unnormalised posterior <paramref name="learner"/>;
    /// <paramref name="scratch"/> is a float buffer of <see cref="MistakeKernel.PaddedLength"/>. Returns -1 when
    /// every teach item has been shown.
    /// </summary>
    public static int NextGreedy(ModelVersion model, ReadOnlySpan<double> learner, ReadOnlySpan<bool> shown, Span<float> scratch, out double gain)
    {
        var error = model.Error;
        var total = 0.0;
        for (var h = 0; h < learner.Length; h++)
        {
            total += learner[h];
        }

        for (var h = 0; h < learner.Length; h++)
        {
            scratch[h] = (float)(learner[h] / total * error[h]);
        }

        var best = -1;
        gain = double.NegativeInfinity;
        for (var x = 0; x < model.TeachCount; x++)
        {
            if (shown[x])
            {
                continue;
            }

            var g = MistakeKernel.RowSum(model.MistakeRow(x), scratch);
            if (g > gain)
            {
                gain = g;
                best = x;
            }
        }

        return best;
    }

    /// <summary>Multiplies the learner's weights by q on the hypotheses that mislabel <paramref name="item"/>.</summary>
    public static void ApplyShown(ModelVersion model, Span<double> learner, int item, double q)
    {
        var row = model.MistakeRow(item);
        for (var w = 0; w < row.Length; w++)
        {
            var bits = row[w];
            while (bits != 0)
            {
                learner[(w * 64) + System.Numerics.BitOperations.TrailingZeroCount(bits)] *= q;
                bits &= bits - 1;
            }
        }
    }

    /// <summary>
    /// The noise-free teacher (Goldman &amp; Kearns 1995): greedy set cover, each step the item that eliminates the
    /// most prior mass among hypotheses consistent with everything shown. Ends when no item eliminates any more;
    /// <paramref name="unteachable"/> is the prior mass then still consistent apart from the target.
    /// </summary>
    public static int[] Cover(ModelVersion model, out double unteachable)
    {
        var consistent = new float[MistakeKernel.PaddedLength(model.HypothesisCount)];
        var prior = model.Prior;
        for (var h = 0; h < prior.Length; h++)
        {
            consistent[h] = (float)prior[h];
        }

        var shown = new bool[model.TeachCount];
        var sequence = new List<int>();
        while (true)
        {
            var best = -1;
            var bestGain = 0.0;
            for (var x = 0; x < model.TeachCount; x++)
            {
                if (shown[x])
                {
                    continue;
                }

                var g = MistakeKernel.RowSum(model.MistakeRow(x), consistent);
                if (g > bestGain)
                {
                    bestGain = g;
                    best = x;
                }
            }

            if (best < 0)
            {
                break;
            }

            sequence.Add(best);
            shown[best] = true;
            var row = model.MistakeRow(best);
            for (var w = 0; w < row.Length; w++)
            {
                var bits = row[w];
                while (bits != 0)
                {
                    consistent[(w * 64) + System.Numerics.BitOperations.TrailingZeroCount(bits)] = 0f;
                    bits &= bits - 1;
                }
            }
        }

        unteachable = 0.0;
        for (var h = 0; h < prior.Length; h++)
        {
            if (h != model.TargetIndex && consistent[h] > 0)
            {
                unteachable += prior[h];
            }
        }

        return [.. sequence];
    }

    /// <summary>
    /// Curriculum baseline: teach items by how much prior mass labels them correctly, easiest first, classes
    /// interleaved (Khan, Zhu &amp; Mutlu, NeurIPS 2011, describe humans teaching easy, clear examples first).
    /// </summary>
    public static int[] EasyFirst(ModelVersion model)
    {
        var prior = model.Prior;
        var ease = new double[model.TeachCount];
        for (var x = 0; x < model.TeachCount; x++)
        {
            var wrong = 0.0;
            var row = model.MistakeRow(x);
            for (var w = 0; w < row.Length; w++)
            {
                var bits = row[w];
                while (bits != 0)
                {
                    wrong += prior[(w * 64) + System.Numerics.BitOperations.TrailingZeroCount(bits)];
                    bits &= bits - 1;
                }
            }

            ease[x] = 1.0 - wrong;
        }

        var queues = Enumerable.Range(0, model.LabelCount)
            .Select(c => new Queue<int>(Enumerable.Range(0, model.TeachCount).Where(x => model.TrueLabel(x) == c).OrderByDescending(x => ease[x]).ThenBy(x => x)))
            .ToArray();
        var order = new List<int>(model.TeachCount);
        while (order.Count < model.TeachCount)
        {
            // Each round takes the easiest remaining item of every class, easiest class first.
            foreach (var queue in queues.Where(q => q.Count > 0).OrderByDescending(q => ease[q.Peek()]).ToArray())
            {
                order.Add(queue.Dequeue());
            }
        }

        return [.. order];
    }
}
