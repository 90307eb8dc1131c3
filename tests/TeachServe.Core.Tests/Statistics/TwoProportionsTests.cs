using System.Numerics;
using MathNet.Numerics.Distributions;
using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

/// <summary>REFERENCES.md section C, plus a brute-force Fisher enumeration in exact integer arithmetic.</summary>
public class TwoProportionsTests
{
    [Theory]
    [InlineData(56, 70, 48, 80, 0.0524, 0.3339, "Newcombe, Stat Med 17:873, 1998, Table II [via]")]
    [InlineData(9, 10, 3, 10, 0.1705, 0.8090, "Newcombe, Stat Med 17:873, 1998, Table II [via]")]
    public void Newcombe_method_10_matches_published_intervals(int x1, int n1, int x2, int n2, double low, double high, string source)
    {
        var ci = TwoProportions.NewcombeDifference(x1, n1, x2, n2);
        AssertNear.Decimals(low, ci.Low, 4, source);
        AssertNear.Decimals(high, ci.High, 4, source);
    }

    [Fact]
    public void Wald_difference_matches_published_interval()
    {
        // 56/70 vs 48/80, Wald 0.0575 – 0.3425 — R output [pub]
        var ci = TwoProportions.WaldDifference(56, 70, 48, 80);
        AssertNear.Decimals(0.0575, ci.Low, 4, "R output [pub]");
        AssertNear.Decimals(0.3425, ci.High, 4, "R output [pub]");
    }

    [Fact]
    public void Pooled_z_matches_published_statistic()
    {
        // 56/70 vs 48/80, pooled two-proportion z = 2.65 — R output [pub]
        var result = TwoProportions.PooledZTest(56, 70, 48, 80);
        AssertNear.Decimals(2.65, result.Statistic, 2, "R output [pub]");
        // The p-value is the two-sided normal tail of z (MathNet), and z² is the Pearson χ² of the 2×2 table,
        // computed here from its four cells (an independent route to the same statistic).
        AssertNear.Absolute(2 * (1 - Normal.CDF(0, 1, Math.Abs(result.Statistic))), result.PValue, 1e-12);
        AssertNear.Relative(PearsonChiSquare(56, 14, 48, 32), result.Statistic * result.Statistic, 1e-12, "z² vs Pearson χ²");
        Assert.True(double.IsNaN(result.DegreesOfFreedom));
        Assert.True(TwoProportions.PooledZTest(48, 80, 56, 70).Statistic < 0, "z follows the p1 − p2 direction");
    }

    [Fact]
    public void Fisher_one_sided_matches_the_tea_tasting_experiment()
    {
        // tea tasting [[3,1],[1,3]], one-sided greater p = 0.2429 (17/70) — Fisher 1935; Agresti, Categorical Data Analysis 2002 p.91 [pub]
        var p = TwoProportions.FisherExactGreater(3, 1, 1, 3);
        AssertNear.Decimals(0.2429, p, 4, "Fisher 1935; Agresti, Categorical Data Analysis 2002 p.91 [pub]");
        AssertNear.Absolute(17.0 / 70, p, 1e-12, "17/70");
    }

    [Fact]
    public void Fisher_two_sided_matches_the_derived_value()
    {
        // same table, two-sided 0.4857 (34/70) — [derived]; re-derived below by enumerating the tables in exact integers.
        var p = TwoProportions.FisherExactTwoSided(3, 1, 1, 3);
        AssertNear.Decimals(0.4857, p, 4, "[derived]");
        var (greater, twoSided) = BruteForceFisher(3, 1, 1, 3);
        AssertNear.Absolute(34.0 / 70, twoSided, 1e-15, "brute force = 34/70");
        AssertNear.Absolute(17.0 / 70, greater, 1e-15, "brute force = 17/70");
        AssertNear.Absolute(twoSided, p, 1e-12, "brute force");
    }

    [Fact]
    public void Fisher_agrees_with_brute_force_on_random_tables()
    {
        var random = new Random(20240611);
        for (var trial = 0; trial < 200; trial++)
        {
            int a = random.Next(0, 25), b = random.Next(0, 25), c = random.Next(0, 25), d = random.Next(0, 25);
            var (greater, twoSided) = BruteForceFisher(a, b, c, d);
            AssertNear.Absolute(greater, TwoProportions.FisherExactGreater(a, b, c, d), 1e-11, $"greater [[{a},{b}],[{c},{d}]]");
            AssertNear.Absolute(twoSided, TwoProportions.FisherExactTwoSided(a, b, c, d), 1e-11, $"two-sided [[{a},{b}],[{c},{d}]]");
        }
    }

    [Fact]
    public void Fisher_stays_finite_on_large_tables()
    {
        // MathNet's Hypergeometric.PMF overflows here (binomial coefficients of 3000 items); the log-space mass must not.
        var p = TwoProportions.FisherExactTwoSided(760, 740, 740, 760);
        Assert.InRange(p, 0.0, 1.0);
        var (_, brute) = BruteForceFisher(760, 740, 740, 760);
        AssertNear.Relative(brute, p, 1e-9);
    }

    [Fact]
    public void Empty_groups_and_degenerate_tables()
    {
        Assert.Equal(new Interval(-1, 1), TwoProportions.NewcombeDifference(0, 0, 3, 10));
        Assert.Equal(new Interval(-1, 1), TwoProportions.WaldDifference(3, 10, 0, 0));
        Assert.True(double.IsNaN(TwoProportions.PooledZTest(0, 10, 0, 12).PValue));
        Assert.True(double.IsNaN(TwoProportions.PooledZTest(10, 10, 12, 12).PValue));
        Assert.Equal(1.0, TwoProportions.FisherExactTwoSided(0, 0, 0, 0));
        Assert.Equal(1.0, TwoProportions.FisherExactGreater(0, 0, 0, 0));
    }

    [Fact]
    public void Invalid_counts_throw()
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => TwoProportions.NewcombeDifference(11, 10, 3, 10));
        Assert.Throws<ArgumentOutOfRangeException>(() => TwoProportions.WaldDifference(1, 10, -1, 10));
        Assert.Throws<ArgumentOutOfRangeException>(() => TwoProportions.PooledZTest(1, -10, 1, 10));
        Assert.Throws<ArgumentOutOfRangeException>(() => TwoProportions.NewcombeDifference(1, 10, 1, 10, 1.0));
        Assert.Throws<ArgumentOutOfRangeException>(() => TwoProportions.FisherExactGreater(-1, 1, 1, 1));
        Assert.Throws<ArgumentOutOfRangeException>(() => TwoProportions.FisherExactTwoSided(1, 1, 1, -1));
    }

    /// <summary>
    /// Every table with the margins of [[a, b], [c, d]], weighted by C(a+c, k)·C(b+d, a+b−k) in exact integers;
    /// two-sided uses R's rule (weights ≤ the observed one, 1e-7 relative tolerance).
    /// </summary>
    private static (double Greater, double TwoSided) BruteForceFisher(int a, int b, int c, int d)
    {
        int row1 = a + b, column1 = a + c, column2 = b + d;
        int low = Math.Max(0, row1 - column2), high = Math.Min(row1, column1);
        var weights = new Dictionary<int, BigInteger>();
        BigInteger left = Choose(column1, low), right = Choose(column2, row1 - low);
        for (var k = low; k <= high; k++)
        {
            weights[k] = left * right;
            // C(n, k+1) = C(n, k)·(n − k)/(k + 1) and C(m, j−1) = C(m, j)·j/(m − j + 1), both exact.
            left = left * (column1 - k) / (k + 1);
            var j = row1 - k;
            right = j == 0 ? 0 : right * j / (column2 - j + 1);
        }

        var total = weights.Values.Aggregate(BigInteger.Zero, (s, w) => s + w);
        var observed = weights[a];
        BigInteger greater = 0, twoSided = 0;
        foreach (var (k, w) in weights)
        {
            if (k >= a)
            {
                greater += w;
            }

            // w ≤ observed·(1 + 1e-7), in integers: 10⁷·w ≤ (10⁷ + 1)·observed.
            if (w * 10_000_000 <= observed * 10_000_001)
            {
                twoSided += w;
            }
        }

        return (Ratio(greater, total), Ratio(twoSided, total));
    }

    private static BigInteger Choose(int n, int k)
    {
        BigInteger result = 1;
        for (var i = 1; i <= k; i++)
        {
            result = result * (n - k + i) / i;
        }

        return result;
    }

    private static double Ratio(BigInteger numerator, BigInteger denominator)
    {
        // Scale to keep 60 significant bits before converting, since both may exceed double's range.
        var shift = Math.Max(0, (int)denominator.GetBitLength() - 60);
        return (double)(numerator >> shift) / (double)(denominator >> shift);
    }

    private static double PearsonChiSquare(double a, double b, double c, double d)
    {
        var n = a + b + c + d;
        double[] rows = [a + b, c + d], columns = [a + c, b + d], cells = [a, b, c, d];
        var sum = 0.0;
        for (var i = 0; i < 4; i++)
        {
            var expected = rows[i / 2] * columns[i % 2] / n;
            sum += (cells[i] - expected) * (cells[i] - expected) / expected;
        }

        return sum;
    }
}
