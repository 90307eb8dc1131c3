using System.Buffers.Binary;
using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Core.Experiments;

/// <summary>
/// Assigns a worker to an arm by a stable hash, so that the same worker always gets the same arm, on any node,
/// process or runtime, with no stored state: SHA-256 of the UTF-8 bytes of <c>salt + '\n' + workerRef</c>, its first
/// 8 bytes read big-endian as an unsigned 64-bit integer, the top 53 bits scaled to a uniform number u in [0, 1),
/// and the arm the first whose cumulative weight share exceeds u.
/// </summary>
public static class ArmAssignment
{
    /// <summary>The arm index for <paramref name="workerRef"/> in the experiment with <paramref name="salt"/>.</summary>
    /// <param name="weights">Allocation weight per arm: at least one, each positive and finite (need not sum to 1).</param>
    /// <exception cref="ArgumentException">No weights, or a weight that is not positive and finite.</exception>
    public static int Assign(string salt, string workerRef, IReadOnlyList<double> weights)
    {
        ArgumentNullException.ThrowIfNull(weights);
        if (weights.Count == 0)
            throw new ArgumentException("At least one weight is needed.", nameof(weights));
        var total = 0.0;
        foreach (var w in weights)
        {
            if (!(w > 0 && double.IsFinite(w)))
                throw new ArgumentException($"Weights must be positive and finite, not {w}.", nameof(weights));
            total += w;
        }

        var target = UnitValue(salt, workerRef) * total;
        var cumulative = 0.0;
        for (var i = 0; i < weights.Count; i++)
        {
            cumulative += weights[i];
            if (target < cumulative)
                return i;
        }

        // u·total can round up to total when u is within an ulp of 1.
        return weights.Count - 1;
    }

    /// <summary>The uniform number in [0, 1) that <see cref="Assign"/> buckets.</summary>
    public static double UnitValue(string salt, string workerRef)
    {
        ArgumentNullException.ThrowIfNull(salt);
        ArgumentNullException.ThrowIfNull(workerRef);
        var input = Encoding.UTF8.GetBytes(salt + "\n" + workerRef);
        Span<byte> hash = stackalloc byte[SHA256.HashSizeInBytes];
        SHA256.HashData(input, hash);
        var bits = BinaryPrimitives.ReadUInt64BigEndian(hash);
        return (bits >> 11) * (1.0 / (1UL << 53));
    }
}
