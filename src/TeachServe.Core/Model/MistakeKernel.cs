using System.Numerics;
using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;

namespace TeachServe.Core.Model;

/// <summary>
/// The one hot loop of teaching: for every candidate item, sums of per-hypothesis weights over the hypotheses
/// that mislabel that item. Rows of the item × hypothesis mistake matrix are bitsets; weights are float vectors
/// padded to a multiple of 64. In the one-row kernels, with 256-bit SIMD, each byte of mistake bits selects 8
/// float lanes through a 256-entry mask table, so a row costs one table load and one AND + ADD per weight vector
/// per 8 hypotheses. The four-vector many-row kernel (the adaptive policy's) looks the byte up in a table of
/// precomputed sums instead: one load and one ADD per 8 hypotheses for all four vectors.
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

    /// <summary>
    /// Words per cache block of the one-vector many-row kernel, a quarter of its block (4,096 hypotheses, one
    /// float vector of 16 KiB, stays in L1 while every row streams past it). Row by row, |H| = 100,000 needs
    /// 400 KB of weights per row, reread from L2/L3 each time.
    /// </summary>
    private const int BlockWords = 16;

    /// <summary>
    /// Words of each row per block of the four-vector many-row kernel: 8 words are 512 hypotheses, 64 groups of
    /// eight, whose lookup tables (64 × 256 entries × 16 bytes = 256 KiB) stay in L2 while every row streams past.
    /// Measured with the benchmarks' --quick check at 10k × 1k and 100k × 5k: 2 and 4 words build the tables too
    /// often, 16 (1 MiB) no longer fit L2; 8 was fastest at both sizes.
    /// </summary>
    private const int TableBlockWords = 8;

    private const int TableGroups = TableBlockWords * 8;

    /// <summary>The lookup tables of one block, per thread (256 KiB, allocated once per thread; a step allocates nothing).</summary>
    [ThreadStatic]
    private static Vector128<float>[]? _tables;

    /// <summary>
    /// Masked sums of four weight vectors over many rows of a packed mistake matrix: for the k-th entry of
    /// <paramref name="rows"/>, <paramref name="sums"/>[4k..4k+3] receive the sums of a, b, c and d. Same values
    /// as <see cref="RowSums4(ReadOnlySpan{ulong}, ReadOnlySpan{float}, ReadOnlySpan{float}, ReadOnlySpan{float}, ReadOnlySpan{float}, out double, out double, out double, out double)"/>
    /// row by row, up to float rounding (partial sums per block are added in double).
    /// </summary>
    /// <remarks>
    /// Table lookup over bytes of mistake bits (the "method of four Russians" for a 0/1 matrix times a few
    /// vectors; Arlazarov, Dinic, Kronrod and Faradzev, "On economical construction of the transitive closure of an
    /// oriented graph", 1970, from memory): for each group of eight hypotheses, a table of the
    /// 256 possible subsets holds their four sums (a, b, c, d) in one 128-bit vector, built with 255 additions.
    /// Each byte of a row then costs one load and one addition for all four vectors, instead of four masked loads
    /// and additions per eight hypotheses. Building the tables costs as much as looking up 256 rows, so callers
    /// should pass all their rows in one call.
    /// </remarks>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void RowSums4(
        ReadOnlySpan<ulong> bits,
        int wordsPerRow,
        ReadOnlySpan<int> rows,
        ReadOnlySpan<float> a,
        ReadOnlySpan<float> b,
        ReadOnlySpan<float> c,
        ReadOnlySpan<float> d,
        Span<double> sums)
    {
        CheckBatch(bits, wordsPerRow, rows, sums, 4);
        CheckWeights(wordsPerRow, a);
        CheckWeights(wordsPerRow, b);
        CheckWeights(wordsPerRow, c);
        CheckWeights(wordsPerRow, d);
        sums = sums[..(rows.Length * 4)];
        if (!Vector128.IsHardwareAccelerated)
        {
            for (var k = 0; k < rows.Length; k++)
            {
                ScalarRowSums(bits.Slice(rows[k] * wordsPerRow, wordsPerRow), a, b, c, d, out sums[4 * k], out sums[(4 * k) + 1], out sums[(4 * k) + 2], out sums[(4 * k) + 3]);
            }

            return;
        }

        sums.Clear();
        if (rows.Length == 0)
        {
            return;
        }

        var tables = _tables ??= new Vector128<float>[TableGroups * 256];
        ref var t0 = ref MemoryMarshal.GetArrayDataReference(tables);
        ref var bitsStart = ref MemoryMarshal.GetReference(bits);
        ref var rs = ref MemoryMarshal.GetReference(sums);
        for (var w0 = 0; w0 < wordsPerRow; w0 += TableBlockWords)
        {
            var words = Math.Min(TableBlockWords, wordsPerRow - w0);
            BuildTables(ref t0, words * 8, w0 * 64, a, b, c, d);
            for (var k = 0; k < rows.Length; k++)
            {
                ref var row = ref Unsafe.Add(ref bitsStart, ((nint)rows[k] * wordsPerRow) + w0);

                // Four accumulators: one chain of additions would wait on the add latency at every byte.
                Vector128<float> s0 = default, s1 = default, s2 = default, s3 = default;
                for (var w = 0; w < words; w++)
                {
                    var word = Unsafe.Add(ref row, w);
                    if (word == 0)
                    {
                        continue;
                    }

                    // Byte offsets of the eight entries (entry size 16): each byte of the word shifted to bits 4–11.
                    ref var t = ref Unsafe.As<Vector128<float>, byte>(ref Unsafe.Add(ref t0, w * 8 * 256));
                    s0 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)((word << 4) & 0xFF0)));
                    s1 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)(0x1000 + ((word >> 4) & 0xFF0))));
                    s2 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)(0x2000 + ((word >> 12) & 0xFF0))));
                    s3 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)(0x3000 + ((word >> 20) & 0xFF0))));
                    s0 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)(0x4000 + ((word >> 28) & 0xFF0))));
                    s1 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)(0x5000 + ((word >> 36) & 0xFF0))));
                    s2 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)(0x6000 + ((word >> 44) & 0xFF0))));
                    s3 += Unsafe.As<byte, Vector128<float>>(ref Unsafe.AddByteOffset(ref t, (nuint)(0x7000 + ((word >> 52) & 0xFF0))));
                }

                var sum = (s0 + s1) + (s2 + s3);
                ref var s = ref Unsafe.Add(ref rs, 4 * k);
                Vector128.StoreUnsafe(Vector128.LoadUnsafe(ref s) + Vector128.WidenLower(sum), ref s);
                Vector128.StoreUnsafe(Vector128.LoadUnsafe(ref s, 2) + Vector128.WidenUpper(sum), ref s, 2);
            }
        }
    }

    /// <summary>
    /// For each of <paramref name="groups"/> groups of eight hypotheses from <paramref name="firstHypothesis"/>,
    /// 256 entries: entry p holds the sums of a, b, c and d over the hypotheses whose bits are set in p.
    /// Entries 2^i … 2^(i+1)−1 are entries 0 … 2^i−1 plus hypothesis i, so each costs one addition.
    /// </summary>
    private static void BuildTables(ref Vector128<float> t0, int groups, int firstHypothesis, ReadOnlySpan<float> a, ReadOnlySpan<float> b, ReadOnlySpan<float> c, ReadOnlySpan<float> d)
    {
        for (var g = 0; g < groups; g++)
        {
            ref var t = ref Unsafe.Add(ref t0, g * 256);
            t = Vector128<float>.Zero;
            var h = firstHypothesis + (g * 8);
            for (var i = 0; i < 8; i++, h++)
            {
                var weight = Vector128.Create(a[h], b[h], c[h], d[h]);
                var size = 1 << i;
                ref var upper = ref Unsafe.Add(ref t, size);
                for (var p = 0; p < size; p++)
                {
                    Unsafe.Add(ref upper, p) = Unsafe.Add(ref t, p) + weight;
                }
            }
        }
    }

    /// <summary>
    /// Masked sums of one weight vector over many rows; <paramref name="sums"/>[k] is the sum over row rows[k].
    /// When <paramref name="columns"/> is given (one word per row word), only hypotheses whose bit is set there
    /// count: callers whose weights are zero on most hypotheses skip those words outright.
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void RowSum(ReadOnlySpan<ulong> bits, int wordsPerRow, ReadOnlySpan<int> rows, ReadOnlySpan<float> a, Span<double> sums, ReadOnlySpan<ulong> columns = default)
    {
        CheckBatch(bits, wordsPerRow, rows, sums, 1);
        CheckWeights(wordsPerRow, a);
        var masked = !columns.IsEmpty;
        if (masked)
        {
            ArgumentOutOfRangeException.ThrowIfLessThan(columns.Length, wordsPerRow, nameof(columns));
        }

        sums = sums[..rows.Length];
        if (!Vector256.IsHardwareAccelerated)
        {
            for (var k = 0; k < rows.Length; k++)
            {
                ScalarRowSums(bits.Slice(rows[k] * wordsPerRow, wordsPerRow), a, a, default, default, out sums[k], out _, out _, out _, columns);
            }

            return;
        }

        sums.Clear();
        ref var cols = ref MemoryMarshal.GetReference(columns);
        ref var masks = ref MemoryMarshal.GetArrayDataReference(ByteMasks);
        ref var bitsStart = ref MemoryMarshal.GetReference(bits);
        ref var ra = ref MemoryMarshal.GetReference(a);
        ref var rs = ref MemoryMarshal.GetReference(sums);

        // One vector is a quarter of the weights per hypothesis, so blocks can be four times wider.
        const int wideBlock = BlockWords * 4;
        for (var w0 = 0; w0 < wordsPerRow; w0 += wideBlock)
        {
            var w1 = Math.Min(w0 + wideBlock, wordsPerRow);
            for (var k = 0; k < rows.Length; k++)
            {
                ref var row = ref Unsafe.Add(ref bitsStart, (nint)rows[k] * wordsPerRow);
                Vector256<float> a0 = default, a1 = default, a2 = default, a3 = default;
                for (var w = w0; w < w1; w++)
                {
                    var word = masked ? Unsafe.Add(ref row, w) & Unsafe.Add(ref cols, w) : Unsafe.Add(ref row, w);
                    if (word == 0)
                    {
                        continue;
                    }

                    var offset = (nuint)(w * 64);
                    for (var g = 0; g < 8; g += 4, offset += 32, word >>= 32)
                    {
                        a0 += Vector256.LoadUnsafe(ref ra, offset) & Unsafe.Add(ref masks, (int)(word & 0xFF));
                        a1 += Vector256.LoadUnsafe(ref ra, offset + 8) & Unsafe.Add(ref masks, (int)((word >> 8) & 0xFF));
                        a2 += Vector256.LoadUnsafe(ref ra, offset + 16) & Unsafe.Add(ref masks, (int)((word >> 16) & 0xFF));
                        a3 += Vector256.LoadUnsafe(ref ra, offset + 24) & Unsafe.Add(ref masks, (int)((word >> 24) & 0xFF));
                    }
                }

                Unsafe.Add(ref rs, k) += Vector256.Sum((a0 + a1) + (a2 + a3));
            }
        }
    }

    private static void CheckBatch(ReadOnlySpan<ulong> bits, int wordsPerRow, ReadOnlySpan<int> rows, Span<double> sums, int perRow)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(wordsPerRow);
        ArgumentOutOfRangeException.ThrowIfLessThan(sums.Length, rows.Length * perRow, nameof(sums));
        var rowCount = bits.Length / wordsPerRow;
        foreach (var r in rows)
        {
            if ((uint)r >= (uint)rowCount)
            {
                throw new ArgumentOutOfRangeException(nameof(rows), r, "Row outside the mistake matrix.");
            }
        }
    }

    private static void CheckWeights(int wordsPerRow, ReadOnlySpan<float> weights) =>
        ArgumentOutOfRangeException.ThrowIfLessThan(weights.Length, wordsPerRow * 64, nameof(weights));

    private static void ScalarRowSums(
        ReadOnlySpan<ulong> row,
        ReadOnlySpan<float> a,
        ReadOnlySpan<float> b,
        ReadOnlySpan<float> c,
        ReadOnlySpan<float> d,
        out double sumA,
        out double sumB,
        out double sumC,
        out double sumD,
        ReadOnlySpan<ulong> columns = default)
    {
        double sa = 0, sb = 0, sc = 0, sd = 0;
        var four = !c.IsEmpty;
        for (var w = 0; w < row.Length; w++)
        {
            var bits = columns.IsEmpty ? row[w] : row[w] & columns[w];
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
