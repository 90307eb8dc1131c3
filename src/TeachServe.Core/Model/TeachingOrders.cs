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
        var error = model.Error;
        var learner = model.Prior.ToArray();
        var shown = new bool[model.TeachCount];
        var weights = new float[MistakeKernel.PaddedLength(m)];
        var sequence = new List<int>(length);

        // Lazy evaluation (Minoux 1978): the unnormalised gain Σ_h Q(h|A)·err(h)·(1 − ℓ(h,x)) only shrinks as A
        // grows, so a gain computed at an earlier step bounds the current one. Each step evaluates candidates in
        // order of their bounds and stops once the best fresh gain beats every remaining bound by a margin wider
        // than float rounding; the pick is then the one the full scan (NextGreedy) would make.
        var bound = new double[model.TeachCount];
        Array.Fill(bound, double.PositiveInfinity);
        var order = new int[model.TeachCount];
        for (var step = 0; step < length; step++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            var total = 0.0;
            for (var h = 0; h < m; h++)
            {
                total += learner[h];
            }

            for (var h = 0; h < m; h++)
            {
                weights[h] = (float)(learner[h] / total * error[h]);
            }

            var best = LazyArgMax(model, weights, total, shown, bound, order, default, out var bestGain);
            if (best < 0 || bestGain <= 0)
            {
                break;
            }

            sequence.Add(best);
            shown[best] = true;
            ApplyShown(model, learner, best, q);
        }

        return [.. sequence];
    }

    /// <summary>Candidates evaluated together by the lazy greedy: enough rows to reuse each block of weights.</summary>
    private const int LazyBatch = 64;

    /// <summary>Relative margin by which a fresh gain must beat a stale bound; float sums are good to about 1e-6.</summary>
    private const double LazyMargin = 1e-4;

    /// <summary>
    /// One lazy step: the unshown item with the largest masked sum of <paramref name="weights"/> (the first of
    /// equal ones), evaluating candidates in order of <paramref name="bound"/> — earlier sums times their
    /// <paramref name="scale"/>, valid upper bounds because the caller's unscaled weights only shrink — and
    /// refreshing the bounds of those it evaluates. -1 when every item has been shown.
    /// </summary>
    private static int LazyArgMax(ModelVersion model, ReadOnlySpan<float> weights, double scale, bool[] shown, double[] bound, int[] order, ReadOnlySpan<ulong> columns, out double bestGain)
    {
        var candidates = 0;
        for (var x = 0; x < model.TeachCount; x++)
        {
            if (!shown[x])
            {
                order[candidates++] = x;
            }
        }

        var byBound = order.AsSpan(0, candidates);
        byBound.Sort((x, y) => bound[x] != bound[y] ? bound[y].CompareTo(bound[x]) : x.CompareTo(y));
        Span<int> rows = stackalloc int[LazyBatch];
        Span<double> sums = stackalloc double[LazyBatch];
        var best = -1;
        bestGain = double.NegativeInfinity;
        var next = 0;
        while (next < candidates && !(bound[byBound[next]] * (1 + LazyMargin) < bestGain * scale))
        {
            var count = Math.Min(LazyBatch, candidates - next);
            byBound.Slice(next, count).CopyTo(rows);
            next += count;
            MistakeKernel.RowSum(model.MistakeBits, model.WordsPerRow, rows[..count], weights, sums, columns);
            for (var k = 0; k < count; k++)
            {
                var x = rows[k];
                bound[x] = sums[k] * scale;
                if (sums[k] > bestGain || (sums[k] == bestGain && x < best))
                {
                    bestGain = sums[k];
                    best = x;
                }
            }
        }

        return best;
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

        return ArgMaxRowSum(model, scratch, shown, out gain);
    }

    /// <summary>Rows evaluated per call of the many-row kernel; small enough for the stack.</summary>
    internal const int CandidateChunk = 256;

    /// <summary>
    /// The unshown teach item with the largest masked sum of <paramref name="weights"/> (the first of equal ones),
    /// or -1 when every item has been shown.
    /// </summary>
    internal static int ArgMaxRowSum(ModelVersion model, ReadOnlySpan<float> weights, ReadOnlySpan<bool> shown, out double gain, ReadOnlySpan<ulong> columns = default)
    {
        Span<int> rows = stackalloc int[CandidateChunk];
        Span<double> sums = stackalloc double[CandidateChunk];
        var best = -1;
        gain = double.NegativeInfinity;
        var x = 0;
        while (x < model.TeachCount)
        {
            var count = 0;
            for (; x < model.TeachCount && count < CandidateChunk; x++)
            {
                if (!shown[x])
                {
                    rows[count++] = x;
                }
            }

            MistakeKernel.RowSum(model.MistakeBits, model.WordsPerRow, rows[..count], weights, sums, columns);
            for (var k = 0; k < count; k++)
            {
                if (sums[k] > gain)
                {
                    gain = sums[k];
                    best = rows[k];
                }
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

        // Eliminated hypotheses have weight 0; masking their columns lets the kernel skip whole words of them.
        var alive = new ulong[model.WordsPerRow];
        for (var h = 0; h < prior.Length; h++)
        {
            alive[h >> 6] |= 1UL << (h & 63);
        }

        // Eliminated mass only grows, so the same lazy evaluation as the stochastic greedy applies.
        var shown = new bool[model.TeachCount];
        var bound = new double[model.TeachCount];
        Array.Fill(bound, double.PositiveInfinity);
        var order = new int[model.TeachCount];
        var sequence = new List<int>();
        while (true)
        {
            var best = LazyArgMax(model, consistent, 1.0, shown, bound, order, alive, out var bestGain);
            if (best < 0 || !(bestGain > 0))
            {
                break;
            }

            sequence.Add(best);
            shown[best] = true;
            var row = model.MistakeRow(best);
            for (var w = 0; w < row.Length; w++)
            {
                var bits = row[w];
                alive[w] &= ~bits;
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
