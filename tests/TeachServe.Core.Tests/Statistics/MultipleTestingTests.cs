using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

/// <summary>
/// REFERENCES.md section D (Holm rows, [derived]); each re-derived by the closure principle: Holm's procedure
/// is closed testing with Bonferroni tests of the intersections, so the adjusted p of H_i is the largest
/// Bonferroni p, min(1, |S|·min over S of p), over all subsets S that contain i (Marcus, Peritz &amp; Gabriel 1976).
/// </summary>
public class MultipleTestingTests
{
    private static readonly double[] BenjaminiHochberg1995 =
        [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240, 0.4262, 0.5719, 0.6528, 0.7590, 1.0000];

    [Fact]
    public void Holm_matches_the_derived_example()
    {
        // p = 0.01, 0.04, 0.03, 0.05, 0.20 → 0.05, 0.12, 0.12, 0.12, 0.20 — Holm, Scand J Stat 6, 1979 [derived]
        double[] p = [0.01, 0.04, 0.03, 0.05, 0.20];
        double[] expected = [0.05, 0.12, 0.12, 0.12, 0.20];
        var adjusted = MultipleTesting.Holm(p);
        var closure = ByClosure(p);
        for (var i = 0; i < p.Length; i++)
        {
            AssertNear.Absolute(expected[i], closure[i], 1e-15, $"closure, hypothesis {i}");
            AssertNear.Absolute(expected[i], adjusted[i], 1e-15, $"Holm, hypothesis {i}");
        }
    }

    [Fact]
    public void Holm_rejects_three_of_the_Benjamini_Hochberg_p_values()
    {
        // 15 p-values of Benjamini & Hochberg 1995, Holm at 0.05 rejects 3 — [derived]
        var adjusted = MultipleTesting.Holm(BenjaminiHochberg1995);
        Assert.Equal(3, adjusted.Count(p => p <= 0.05));
        Assert.Equal(3, StepDownRejections(BenjaminiHochberg1995, 0.05));
        var closure = ByClosure(BenjaminiHochberg1995);
        for (var i = 0; i < adjusted.Length; i++)
        {
            AssertNear.Absolute(closure[i], adjusted[i], 1e-15, $"hypothesis {i}");
        }
    }

    [Fact]
    public void Holm_agrees_with_closed_testing_on_random_inputs()
    {
        var random = new Random(7919);
        for (var trial = 0; trial < 50; trial++)
        {
            var p = Enumerable.Range(0, random.Next(1, 9)).Select(_ => Math.Round(random.NextDouble() * random.NextDouble(), 3)).ToArray();
            var adjusted = MultipleTesting.Holm(p);
            var closure = ByClosure(p);
            for (var i = 0; i < p.Length; i++)
            {
                AssertNear.Absolute(closure[i], adjusted[i], 1e-15, $"trial {trial}, hypothesis {i}");
                Assert.True(adjusted[i] >= p[i] && adjusted[i] <= 1);
            }
        }
    }

    [Fact]
    public void NaN_entries_are_kept_and_not_counted()
    {
        var adjusted = MultipleTesting.Holm([0.01, double.NaN, 0.04]);
        Assert.True(double.IsNaN(adjusted[1]));
        AssertNear.Absolute(0.02, adjusted[0], 1e-15);
        AssertNear.Absolute(0.04, adjusted[2], 1e-15);
        Assert.Empty(MultipleTesting.Holm([]));
        Assert.Throws<ArgumentOutOfRangeException>(() => MultipleTesting.Holm([0.5, 1.5]));
        Assert.Throws<ArgumentOutOfRangeException>(() => MultipleTesting.Holm([-0.1]));
    }

    private static double[] ByClosure(double[] p)
    {
        var m = p.Length;
        var adjusted = new double[m];
        for (var subset = 1; subset < 1 << m; subset++)
        {
            var size = System.Numerics.BitOperations.PopCount((uint)subset);
            var smallest = Enumerable.Range(0, m).Where(i => ((subset >> i) & 1) == 1).Min(i => p[i]);
            var bonferroni = Math.Min(1.0, size * smallest);
            for (var i = 0; i < m; i++)
            {
                if (((subset >> i) & 1) == 1)
                {
                    adjusted[i] = Math.Max(adjusted[i], bonferroni);
                }
            }
        }

        return adjusted;
    }

    /// <summary>Holm's procedure as he states it: reject the k-th smallest while p(k) ≤ α/(m − k + 1).</summary>
    private static int StepDownRejections(IReadOnlyList<double> p, double alpha)
    {
        var sorted = p.Order().ToArray();
        var k = 0;
        while (k < sorted.Length && sorted[k] <= alpha / (sorted.Length - k))
        {
            k++;
        }

        return k;
    }
}
