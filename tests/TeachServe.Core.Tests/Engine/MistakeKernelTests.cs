using TeachServe.Core.Model;

namespace TeachServe.Core.Tests.Engine;

public class MistakeKernelTests
{
    /// <summary>Random bits and weights; sizes straddle the kernels' 512-, 1,024- and 4,096-hypothesis blocks.</summary>
    private static (ulong[] Bits, int Words, float[][] Weights) Random(int seed, int hypotheses, int rows)
    {
        var random = new SeededRandom((ulong)seed);
        var words = MistakeKernel.WordsPerRow(hypotheses);
        var bits = new ulong[rows * words];
        for (var r = 0; r < rows; r++)
        {
            var density = random.NextDouble();
            for (var h = 0; h < hypotheses; h++)
            {
                if (random.NextDouble() < density)
                {
                    bits[(r * words) + (h >> 6)] |= 1UL << (h & 63);
                }
            }
        }

        var weights = new float[4][];
        for (var v = 0; v < 4; v++)
        {
            weights[v] = new float[MistakeKernel.PaddedLength(hypotheses)];
            for (var h = 0; h < hypotheses; h++)
            {
                weights[v][h] = (float)random.NextDouble();
            }
        }

        return (bits, words, weights);
    }

    private static double Plain(ulong[] bits, int words, int row, float[] weights, ulong[]? columns = null)
    {
        var sum = 0.0;
        for (var h = 0; h < words * 64; h++)
        {
            var w = h >> 6;
            var word = bits[(row * words) + w] & (columns?[w] ?? ulong.MaxValue);
            if ((word & (1UL << (h & 63))) != 0)
            {
                sum += weights[h];
            }
        }

        return sum;
    }

    [Theory]
    [InlineData(1, 70, 3)]
    [InlineData(2, 1_024, 7)]
    [InlineData(3, 5_000, 40)]
    [InlineData(6, 600, 700)]
    public void Many_row_sums_match_plain_sums(int seed, int hypotheses, int rowCount)
    {
        var (bits, words, w) = Random(seed, hypotheses, rowCount);
        var rows = Enumerable.Range(0, rowCount).Where(r => r % 3 != 1).Reverse().ToArray();
        var sums4 = new double[rows.Length * 4];
        MistakeKernel.RowSums4(bits, words, rows, w[0], w[1], w[2], w[3], sums4);
        var sums1 = new double[rows.Length];
        MistakeKernel.RowSum(bits, words, rows, w[2], sums1);
        for (var k = 0; k < rows.Length; k++)
        {
            for (var v = 0; v < 4; v++)
            {
                var expected = Plain(bits, words, rows[k], w[v]);
                Assert.Equal(expected, sums4[(4 * k) + v], 1e-5 * Math.Max(1, expected));
            }

            Assert.Equal(Plain(bits, words, rows[k], w[2]), sums1[k], 1e-5 * Math.Max(1, sums1[k]));
            MistakeKernel.RowSums4(bits.AsSpan(rows[k] * words, words), w[0], w[1], w[2], w[3], out var a, out _, out _, out var d);
            Assert.Equal(a, sums4[4 * k], 1e-5 * Math.Max(1, a));
            Assert.Equal(d, sums4[(4 * k) + 3], 1e-5 * Math.Max(1, d));
        }
    }

    [Fact]
    public void Rows_of_all_ones_and_all_zeros_give_the_totals_and_zero()
    {
        // Every byte value 0 and 255 hits the first and last table entry; whole zero words are skipped.
        const int hypotheses = 1_500;
        var words = MistakeKernel.WordsPerRow(hypotheses);
        var bits = new ulong[3 * words];
        for (var h = 0; h < hypotheses; h++)
        {
            bits[h >> 6] |= 1UL << (h & 63);
            if (h % 2 == 0)
            {
                bits[(2 * words) + (h >> 6)] |= 1UL << (h & 63);
            }
        }

        var weights = new float[4][];
        for (var v = 0; v < 4; v++)
        {
            weights[v] = new float[MistakeKernel.PaddedLength(hypotheses)];
            for (var h = 0; h < hypotheses; h++)
            {
                weights[v][h] = (v + 1) * 0.25f;
            }
        }

        var sums = new double[12];
        MistakeKernel.RowSums4(bits, words, [0, 1, 2], weights[0], weights[1], weights[2], weights[3], sums);
        for (var v = 0; v < 4; v++)
        {
            Assert.Equal(hypotheses * (v + 1) * 0.25, sums[v], 1e-9);
            Assert.Equal(0.0, sums[4 + v]);
            Assert.Equal(hypotheses / 2 * (v + 1) * 0.25, sums[8 + v], 1e-9);
        }
    }

    [Fact]
    public void Column_mask_restricts_the_sum_to_its_hypotheses()
    {
        var (bits, words, w) = Random(4, 9_000, 12);
        var random = new SeededRandom(5);
        var columns = new ulong[words];
        for (var i = 0; i < words; i++)
        {
            // Whole words off as well as scattered bits, as in the cover order once most hypotheses are eliminated.
            columns[i] = i % 4 == 0 ? 0 : random.NextUInt64();
        }

        var rows = Enumerable.Range(0, 12).ToArray();
        var sums = new double[rows.Length];
        MistakeKernel.RowSum(bits, words, rows, w[0], sums, columns);
        for (var k = 0; k < rows.Length; k++)
        {
            var expected = Plain(bits, words, rows[k], w[0], columns);
            Assert.Equal(expected, sums[k], 1e-5 * Math.Max(1, expected));
        }
    }
}
