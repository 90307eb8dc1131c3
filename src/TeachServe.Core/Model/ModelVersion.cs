using TeachServe.Core.Projects;

namespace TeachServe.Core.Model;

/// <summary>
/// An immutable compiled snapshot of a project (DESIGN 1, 2.1): items (teach pool first, then test pool),
/// hypotheses as an item × hypothesis mistake bitset, their errors and prior, the learner parameters and the
/// orders precomputed for the non-adaptive policies. Safe to share between threads and sessions.
/// </summary>
public sealed class ModelVersion
{
    private readonly ulong[] _mistakes;
    private readonly byte[]? _predictions;
    private readonly int[] _trueLabels;
    private readonly double[] _error;
    private readonly double[] _prior;

    internal ModelVersion(
        IReadOnlyList<string> labels,
        IReadOnlyList<string> itemIds,
        int teachCount,
        int[] trueLabels,
        ulong[] mistakes,
        byte[]? predictions,
        double[] prior,
        int targetIndex,
        LearnerSettings learner,
        int[] greedySequence,
        int[] easyFirstOrder,
        int[] coverSequence,
        ModelSummary summary,
        double[]? error = null)
    {
        Labels = labels;
        ItemIds = itemIds;
        TeachCount = teachCount;
        _trueLabels = trueLabels;
        _mistakes = mistakes;
        _predictions = predictions;
        _prior = prior;
        TargetIndex = targetIndex;
        Learner = learner;
        HypothesisCount = prior.Length;
        WordsPerRow = MistakeKernel.WordsPerRow(HypothesisCount);
        Q = DisagreementFactor(learner.Alpha);
        GreedySequence = greedySequence;
        EasyFirstOrder = easyFirstOrder;
        CoverSequence = coverSequence;
        Summary = summary;
        _error = error ?? ComputeErrors();
    }

    public IReadOnlyList<string> Labels { get; }
    public int LabelCount => Labels.Count;
    public IReadOnlyList<string> ItemIds { get; }
    public int ItemCount => ItemIds.Count;
    public int TeachCount { get; }
    public int TestCount => ItemCount - TeachCount;
    public int HypothesisCount { get; }
    public int WordsPerRow { get; }
    public int TargetIndex { get; }
    public LearnerSettings Learner { get; }

    /// <summary>q = 1/(1+e^alpha), the likelihood a learner gives an example its hypothesis mislabels (Singla et al. 2014).</summary>
    public double Q { get; }

    /// <summary>The stochastic-greedy teaching order for the project's alpha (same for every annotator).</summary>
    public IReadOnlyList<int> GreedySequence { get; }

    /// <summary>Teach items from easiest (most prior mass labels them right) to hardest, classes interleaved.</summary>
    public IReadOnlyList<int> EasyFirstOrder { get; }

    /// <summary>The noise-free greedy set-cover order, until no item eliminates any further prior mass.</summary>
    public IReadOnlyList<int> CoverSequence { get; }

    public ModelSummary Summary { get; internal set; }

    public ReadOnlySpan<double> Error => _error;
    internal double[] ErrorArray => _error;
    public ReadOnlySpan<double> Prior => _prior;
    internal ReadOnlySpan<ulong> MistakeBits => _mistakes;
    internal ReadOnlySpan<byte> PredictionBytes => _predictions;
    internal ReadOnlySpan<int> TrueLabelArray => _trueLabels;

    public static double DisagreementFactor(double alpha) =>
        double.IsPositiveInfinity(alpha) ? 0.0 : 1.0 / (1.0 + Math.Exp(alpha));

    public bool IsTeachItem(int item) => item < TeachCount;

    public int TrueLabel(int item) => _trueLabels[item];

    /// <summary>The mistake bits of one item: bit h is set when hypothesis h mislabels the item.</summary>
    public ReadOnlySpan<ulong> MistakeRow(int item) => _mistakes.AsSpan(item * WordsPerRow, WordsPerRow);

    public bool Mistake(int hypothesis, int item) =>
        (_mistakes[(item * WordsPerRow) + (hypothesis >> 6)] & (1UL << (hypothesis & 63))) != 0;

    /// <summary>The label hypothesis <paramref name="hypothesis"/> gives item <paramref name="item"/>.</summary>
    public int Predict(int hypothesis, int item)
    {
        if (_predictions is not null)
        {
            return _predictions[(item * HypothesisCount) + hypothesis];
        }

        var truth = _trueLabels[item];
        return Mistake(hypothesis, item) ? 1 - truth : truth;
    }

    private double[] ComputeErrors()
    {
        var counts = new int[HypothesisCount];
        for (var item = 0; item < ItemCount; item++)
        {
            var row = MistakeRow(item);
            for (var w = 0; w < row.Length; w++)
            {
                var bits = row[w];
                while (bits != 0)
                {
                    counts[(w * 64) + System.Numerics.BitOperations.TrailingZeroCount(bits)]++;
                    bits &= bits - 1;
                }
            }
        }

        var error = new double[HypothesisCount];
        for (var h = 0; h < error.Length; h++)
        {
            error[h] = (double)counts[h] / ItemCount;
        }

        return error;
    }
}
