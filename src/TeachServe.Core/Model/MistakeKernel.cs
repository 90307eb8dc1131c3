using System.Numerics;
using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;

namespace TeachServe.Core.Model;

/// <summary>
/// The one hot loop of teaching: for every candidate item, sums of per-hypothesis weights over the hypotheses
/// that mislabel that item. Rows of the item × hypothesis mistake matrix are bitsets; weights are float vectors
/// padded to a multiple of 64. With 256-bit SIMD each byte of mistake bits selects 8 float lanes through a
/// 256-entry mask table, so a row costs one table load and one AND + ADD per weight vector per 8 hypotheses.
/// </summary>
public static class MistakeKernel
{
    private static readonly Vector256<float>[] ByteMasks = BuildByteMasks();

    private static Vector256<float>[] BuildByteMasks()
    {
        var masks = new Vector256<float>[256];
        Span<int> lanes = stackalloc int[8];
        for (var b = 0; b < 256; b++)
        {
            for (var lane = 0; lane < 8; lane++)
            {
                lanes[lane] = ((b >> lane) & 1) != 0 ? -1 : 0;
            }

            masks[b] = Vector256.Create<int>(lanes).AsSingle();
        }

        return masks;
    }

    /// <summary>Number of floats a weight vector over <paramref name="hypotheses"/> hypotheses must hold.</summary>
    public static int PaddedLength(int hypotheses) => WordsPerRow(hypotheses) * 64;

    public static int WordsPerRow(int hypotheses) => (hypotheses + 63) / 64;

    /// <summary>Masked sum of one weight vector over one mistake row.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static double RowSum(ReadOnlySpan<ulong> row, ReadOnlySpan<float> a)
    {
        if (Vector256.IsHardwareAccelerated)
        {
            var acc = Vector256<float>.Zero;
            ref var ra = ref MemoryMarshal.GetReference(a);
            for (var w = 0; w < row.Length; w++)
            {
                var bits = row[w];
                if (bits == 0)
                {
                    continue;
                }

                var baseIndex = w * 64;
                for (var k = 0; k < 8; k++)
                {
                    acc += Vector256.LoadUnsafe(ref ra, (nuint)(baseIndex + (k * 8))) & ByteMasks[(int)((bits >> (k * 8)) & 0xFF)];
                }
            }

            return Vector256.Sum(acc);
        }

        ScalarRowSums(row, a, a, default, default, out var sum, out _, out _, out _);
        return sum;
    }

    /// <summary>Masked sums of two weight vectors over one mistake row.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void RowSums2(ReadOnlySpan<ulong> row, ReadOnlySpan<float> a, ReadOnlySpan<float> b, out double sumA, out double sumB)
    {
        if (Vector256.IsHardwareAccelerated)
        {
            var accA = Vector256<float>.Zero;
            var accB = Vector256<float>.Zero;
            ref var ra = ref MemoryMarshal.GetReference(a);
            ref var rb = ref MemoryMarshal.GetReference(b);
            for (var w = 0; w < row.Length; w++)
            {
                var bits = row[w];
                if (bits == 0)
                {
                    continue;
                }

                var baseIndex = w * 64;
                for (var k = 0; k < 8; k++)
                {
                    var mask = ByteMasks[(int)((bits >> (k * 8)) & 0xFF)];
                    var offset = (nuint)(baseIndex + (k * 8));
                    accA += Vector256.LoadUnsafe(ref ra, offset) & mask;
                    accB += Vector256.LoadUnsafe(ref rb, offset) & mask;
                }
            }

            sumA = Vector256.Sum(accA);
            sumB = Vector256.Sum(accB);
            return;
        }

        ScalarRowSums(row, a, b, default, default, out sumA, out sumB, out _, out _);
    }

    /// <summary>Masked sums of four weight vectors over one mistake row.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void RowSums4(
        ReadOnlySpan<ulong> row,
        ReadOnlySpan<float> a,
        ReadOnlySpan<float> b,
        ReadOnlySpan<float> c,
        ReadOnlySpan<float> d,
        out double sumA,
        out double sumB,
        out double sumC,
        out double sumD)
    {
        if (Vector256.IsHardwareAccelerated)
        {
            var accA = Vector256<float>.Zero;
            var accB = Vector256<float>.Zero;
            var accC = Vector256<float>.Zero;
            var accD = Vector256<float>.Zero;
            ref var ra = ref MemoryMarshal.GetReference(a);
            ref var rb = ref MemoryMarshal.GetReference(b);
            ref var rc = ref MemoryMarshal.GetReference(c);
            ref var rd = ref MemoryMarshal.GetReference(d);
            for (var w = 0; w < row.Length; w++)
            {
                var bits = row[w];
                if (bits == 0)
                {
                    continue;
                }

                var baseIndex = w * 64;
                for (var k = 0; k < 8; k++)
                {
                    var mask = ByteMasks[(int)((bits >> (k * 8)) & 0xFF)];
                    var offset = (nuint)(baseIndex + (k * 8));
                    accA += Vector256.LoadUnsafe(ref ra, offset) & mask;
                    accB += Vector256.LoadUnsafe(ref rb, offset) & mask;
                    accC += Vector256.LoadUnsafe(ref rc, offset) & mask;
                    accD += Vector256.LoadUnsafe(ref rd, offset) & mask;
                }
            }

            sumA = Vector256.Sum(accA);
            sumB = Vector256.Sum(accB);
            sumC = Vector256.Sum(accC);
            sumD = Vector256.Sum(accD);
            return;
        }

        ScalarRowSums(row, a, b, c, d, out sumA, out sumB, out sumC, out sumD);
    }

    private static void ScalarRowSums(
        ReadOnlySpan<ulong> row,
        ReadOnlySpan<float> a,
        ReadOnlySpan<float> b,
        ReadOnlySpan<float> c,
        ReadOnlySpan<float> d,
        out double sumA,
        out double sumB,
        out double sumC,
        out double sumD)
    {
        double sa = 0, sb = 0, sc = 0, sd = 0;
        var four = !c.IsEmpty;
        for (var w = 0; w < row.Length; w++)
        {
            var bits = row[w];
            while (bits != 0)
            {
                var h = (w * 64) + BitOperations.TrailingZeroCount(bits);
                bits &= bits - 1;
                sa += a[h];
                sb += b[h];
                if (four)
                {
                    sc += c[h];
                    sd += d[h];
                }
            }
        }

        sumA = sa;
        sumB = sb;
        sumC = sc;
        sumD = sd;
    }
}
