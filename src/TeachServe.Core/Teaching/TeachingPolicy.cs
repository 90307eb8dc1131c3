using System.Buffers;
using System.Runtime.CompilerServices;
using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Teaching;

/// <summary>
/// Chooses the next teaching item (DESIGN 2.4). A step allocates nothing: its float vectors are refilled from the
/// belief at every step, so they hold no session state and live per thread (<see cref="PolicyScratch"/>), not
/// per session.
/// </summary>
public sealed class TeachingPolicy
{
    private readonly ModelVersion _model;

    // Adaptive only: per teach item, a factor in [0, 1] on its positive gain (ItemTypicality.Weights); null = none.
    private readonly double[]? _itemWeights;

    public TeachingPolicy(ModelVersion model, string policy, double blendWeight, double[]? itemWeights = null)
    {
        if (itemWeights is not null && itemWeights.Length != model.TeachCount)
        {
            throw new ArgumentException($"itemWeights has {itemWeights.Length} entries for {model.TeachCount} teach items.", nameof(itemWeights));
        }

        _itemWeights = itemWeights;
        if (!PolicyNames.All.Contains(policy))
        {
            throw new ArgumentException($"Unknown policy '{policy}'.", nameof(policy));
        }

        ArgumentOutOfRangeException.ThrowIfNegative(blendWeight);
        _model = model;
        Name = policy;
        BlendWeight = blendWeight;
    }

    public string Name { get; }
    public double BlendWeight { get; }

    /// <summary>The next teach item, or -1 when all have been shown.</summary>
    /// <param name="belief">The session's belief (adaptive uses β and Q; the greedy rules use Q).</param>
    /// <param name="shown">Teach items already shown, indexed by item.</param>
    /// <param name="taught">How many teach items were shown, in order (prefix of the precomputed orders).</param>
    /// <param name="tolerance">
    /// Adaptive only: with a value above 0, one item drawn uniformly with <paramref name="random"/> among those whose gain
    /// is at least (1 − tolerance) × the best gain, instead of the first best (so that annotators do not all see the
    /// same opening items where several are almost as good).
    /// </param>
    public int ChooseNext(Belief belief, ReadOnlySpan<bool> shown, int taught, SeededRandom random, double tolerance = 0)
    {
        if (taught >= _model.TeachCount)
        {
            return -1;
        }

        switch (Name)
        {
            case PolicyNames.Random:
                return RandomUnshown(shown, taught, random);
            case PolicyNames.EasyFirst:
                return FirstUnshown(_model.EasyFirstOrder, shown);
            case PolicyNames.Cover:
                if (taught < _model.CoverSequence.Count && !shown[_model.CoverSequence[taught]])
                {
                    return _model.CoverSequence[taught];
                }

                return Greedy(belief, shown);
            case PolicyNames.StochasticGreedy:
                if (belief.Q == _model.Q && taught < _model.GreedySequence.Count && !shown[_model.GreedySequence[taught]])
                {
                    return _model.GreedySequence[taught];
                }

                return Greedy(belief, shown);
            default:
                return Adaptive(belief, shown, tolerance > 0 ? (tolerance, random) : null);
        }
    }

    private int Greedy(Belief belief, ReadOnlySpan<bool> shown)
    {
        var item = TeachingOrders.NextGreedy(_model, belief.LearnerWeights, shown, PolicyScratch.Rent(1, _model.HypothesisCount), out var gain);
        return gain > 0 ? item : FirstUnshownIndex(shown);
    }

    /// <summary>
    /// Largest expected drop of predicted error, (1−q)·Σ_{h(x)≠y(x)} β(h)·(err(h) − E(A∪{x})), plus the blend
    /// weight times the normalised stochastic-greedy gain (1−q)·Σ_{h(x)≠y(x)} P(h|A)·err(h). One pass of four
    /// masked sums per candidate over the mistake bits. With item weights, a positive gain is multiplied by the item's
    /// weight (typical items first); a gain of zero or less is left as it is, so a weight never makes an item look useful.
    /// </summary>
    private int Adaptive(Belief belief, ReadOnlySpan<bool> shown, (double Tolerance, SeededRandom Random)? near = null)
    {
        // Normalising by a multiply: the weights are rounded to float next, far coarser than the division's rounding.
        var inverseTotal = 1.0 / belief.LearnerTotal;
        var padded = MistakeKernel.PaddedLength(_model.HypothesisCount);
        var scratch = PolicyScratch.Rent(4, _model.HypothesisCount);
        var beliefWeights = scratch[..padded];
        var beliefError = scratch.Slice(padded, padded);
        var learnerWeights = scratch.Slice(2 * padded, padded);
        var learnerError = scratch.Slice(3 * padded, padded);
        var learnerErrorTotal = FillWeights(belief.Weights, belief.LearnerWeights, _model.Error, inverseTotal, beliefWeights, beliefError, learnerWeights, learnerError);

        var oneMinusQ = 1.0 - belief.Q;
        var best = -1;
        var bestGain = double.NegativeInfinity;

        // Every unshown item in one kernel call: its lookup tables are built once per block of hypotheses.
        var rowBuffer = ArrayPool<int>.Shared.Rent(_model.TeachCount);
        var sumBuffer = ArrayPool<double>.Shared.Rent(_model.TeachCount * 4);
        try
        {
            var count = 0;
            for (var x = 0; x < _model.TeachCount; x++)
            {
                if (!shown[x])
                {
                    rowBuffer[count++] = x;
                }
            }

            var rows = rowBuffer.AsSpan(0, count);
            var sums = sumBuffer.AsSpan(0, count * 4);
            MistakeKernel.RowSums4(_model.MistakeBits, _model.WordsPerRow, rows, beliefWeights, beliefError, learnerWeights, learnerError, sums);
            for (var k = 0; k < count; k++)
            {
                var wrongMass = sums[4 * k];
                var wrongError = sums[(4 * k) + 1];
                var learnerWrong = sums[(4 * k) + 2];
                var learnerWrongError = sums[(4 * k) + 3];
                // With q = 0 an item every remaining rule mislabels would leave no learner mass; the target always
                // survives in exact arithmetic, so the guard only catches float rounding.
                var remaining = 1.0 - (oneMinusQ * learnerWrong);
                var expectedAfter = remaining > 1e-12 ? (learnerErrorTotal - (oneMinusQ * learnerWrongError)) / remaining : 0.0;
                var gain = oneMinusQ * (wrongError - (wrongMass * expectedAfter) + (BlendWeight * learnerWrongError));
                if (_itemWeights is not null && gain > 0)
                {
                    gain *= _itemWeights[rows[k]];
                }

                if (near is not null)
                {
                    sums[k] = gain; // slot k holds a sum of candidate k / 4 ≤ k, already read
                }

                if (gain > bestGain)
                {
                    bestGain = gain;
                    best = rows[k];
                }
            }

            if (near is { } n && bestGain > 0)
            {
                var floor = bestGain * (1 - n.Tolerance);
                var close = 0;
                for (var k = 0; k < count; k++)
                {
                    close += sums[k] >= floor ? 1 : 0;
                }

                var pick = n.Random.NextInt(close);
                for (var k = 0; k < count; k++)
                {
                    if (sums[k] >= floor && pick-- == 0)
                    {
                        best = rows[k];
                        break;
                    }
                }
            }
        }
        finally
        {
            ArrayPool<int>.Shared.Return(rowBuffer);
            ArrayPool<double>.Shared.Return(sumBuffer);
        }

        return best;
    }

    /// <summary>
    /// The four float vectors of the adaptive gain: β, β·err, P(h|A) = Q·inverseTotal and P(h|A)·err; returns
    /// Σ_h P(h|A)·err(h) in double. Its own method, never inlined, so that the running sums of the step stay in
    /// registers: the register allocation of the long <see cref="Adaptive"/> is fragile (one added Stopwatch call
    /// there made the JIT store and reload such a sum per hypothesis: 3.6 ns per hypothesis for that sum alone,
    /// where this whole loop, its sum included, takes 1.3 ns at 10k × 1k).
    /// One call per step costs nothing beside |H| iterations.
    /// </summary>
    [MethodImpl(MethodImplOptions.NoInlining)]
    private static double FillWeights(
        ReadOnlySpan<double> beta,
        ReadOnlySpan<double> learner,
        ReadOnlySpan<double> error,
        double inverseTotal,
        Span<float> beliefWeights,
        Span<float> beliefError,
        Span<float> learnerWeights,
        Span<float> learnerError)
    {
        var m = learner.Length;
        beta = beta[..m];
        error = error[..m];
        beliefWeights = beliefWeights[..m];
        beliefError = beliefError[..m];
        learnerWeights = learnerWeights[..m];
        learnerError = learnerError[..m];
        double learnerErrorTotal = 0;
        for (var h = 0; h < m; h++)
        {
            var p = learner[h] * inverseTotal;
            var pe = p * error[h];
            beliefWeights[h] = (float)beta[h];
            beliefError[h] = (float)(beta[h] * error[h]);
            learnerWeights[h] = (float)p;
            learnerError[h] = (float)pe;
            learnerErrorTotal += pe;
        }

        return learnerErrorTotal;
    }

    private int RandomUnshown(ReadOnlySpan<bool> shown, int taught, SeededRandom random)
    {
        var pick = random.NextInt(_model.TeachCount - taught);
        for (var x = 0; x < _model.TeachCount; x++)
        {
            if (!shown[x] && pick-- == 0)
            {
                return x;
            }
        }

        return -1;
    }

    private static int FirstUnshown(IReadOnlyList<int> order, ReadOnlySpan<bool> shown)
    {
        foreach (var x in order)
        {
            if (!shown[x])
            {
                return x;
            }
        }

        return -1;
    }

    private int FirstUnshownIndex(ReadOnlySpan<bool> shown)
    {
        for (var x = 0; x < _model.TeachCount; x++)
        {
            if (!shown[x])
            {
                return x;
            }
        }

        return -1;
    }
}
