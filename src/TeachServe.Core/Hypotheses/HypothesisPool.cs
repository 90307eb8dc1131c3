using System.Runtime.InteropServices;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Collects candidate hypotheses as prediction vectors over all items, merging identical vectors and adding
/// their prior weight (DESIGN 2.1).
/// </summary>
public sealed class HypothesisPool
{
    private readonly Dictionary<byte[], int> _index = new(PredictionComparer.Instance);
    private readonly List<byte[]> _predictions = [];
    private readonly List<double> _weights = [];

    public HypothesisPool(int itemCount, int labelCount)
    {
        ItemCount = itemCount;
        LabelCount = labelCount;
    }

    public int ItemCount { get; }
    public int LabelCount { get; }

    /// <summary>Candidates offered, duplicates included.</summary>
    public int Generated { get; private set; }

    public int Count => _predictions.Count;
    public IReadOnlyList<byte[]> Predictions => _predictions;
    public IReadOnlyList<double> Weights => _weights;

    /// <summary>Adds a hypothesis; returns its index (an existing one when the prediction vector is known).</summary>
    public int Add(byte[] predictions, double weight)
    {
        if (predictions.Length != ItemCount)
        {
            throw new ArgumentException($"Expected {ItemCount} predictions, got {predictions.Length}.", nameof(predictions));
        }

        if (!(weight > 0) || !double.IsFinite(weight))
        {
            throw new ArgumentOutOfRangeException(nameof(weight), weight, "Prior weight must be positive and finite.");
        }

        Generated++;
        if (_index.TryGetValue(predictions, out var existing))
        {
            _weights[existing] += weight;
            return existing;
        }

        _index.Add(predictions, _predictions.Count);
        _predictions.Add(predictions);
        _weights.Add(weight);
        return _predictions.Count - 1;
    }

    /// <summary>Index of a hypothesis with exactly these predictions, or -1.</summary>
    public int IndexOf(byte[] predictions) => _index.TryGetValue(predictions, out var i) ? i : -1;

    private sealed class PredictionComparer : IEqualityComparer<byte[]>
    {
        public static readonly PredictionComparer Instance = new();

        public bool Equals(byte[]? x, byte[]? y) => x.AsSpan().SequenceEqual(y);

        public int GetHashCode(byte[] obj)
        {
            var hash = new HashCode();
            hash.AddBytes(MemoryMarshal.AsBytes(obj.AsSpan()));
            return hash.ToHashCode();
        }
    }
}
