using TeachServe.Core.Model;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Engine;

public class TeachingDimensionTests
{
    private static ModelVersion Build(int[] truth, IEnumerable<byte[]> hypotheses) =>
        ModelCompiler.FromPredictions(
            ["no", "yes"],
            Enumerable.Range(0, truth.Length).Select(i => $"x{i}").ToArray(),
            truth.Length,
            truth,
            hypotheses.Select(p => (p, 1.0)),
            new LearnerSettings { Alpha = 2, Lapse = 0 });

    /// <summary>Harmonic number H(d) = 1 + 1/2 + … + 1/d.</summary>
    private static double Harmonic(int d) => Enumerable.Range(1, d).Sum(i => 1.0 / i);

    [Theory]
    [InlineData(8, 3, 5)]
    [InlineData(10, 2, 9)]
    [InlineData(12, 5, 6)]
    public void Interior_interval_is_taught_with_four_items(int n, int a, int b)
    {
        // Goldman & Kearns 1995 [derived, REFERENCES.md A]: an interior interval on a discrete line has teaching
        // dimension 4 (a−1, a, b, b+1). The greedy cover is at most H(d) times the optimum (Johnson 1974;
        // Chvátal, Math. of OR 4(3), 1979 [pub]), and on this class it finds exactly the four boundary items.
        var truth = Enumerable.Range(1, n).Select(x => x >= a && x <= b ? 1 : 0).ToArray();
        var hypotheses = new List<byte[]> { new byte[n] };
        for (var lo = 1; lo <= n; lo++)
        {
            for (var hi = lo; hi <= n; hi++)
            {
                hypotheses.Add(Enumerable.Range(1, n).Select(x => (byte)(x >= lo && x <= hi ? 1 : 0)).ToArray());
            }
        }

        var model = Build(truth, hypotheses);
        Assert.Equal(new[] { a - 2, a - 1, b - 1, b }, model.CoverSequence.Order().ToArray());
        Assert.Equal(0.0, model.Summary.UnteachablePriorMass);
    }

    [Theory]
    [InlineData(4, 2)]
    [InlineData(5, 1)]
    [InlineData(5, 3)]
    public void Monotone_conjunction_of_r_variables_needs_r_plus_one_items(int n, int r)
    {
        // Goldman & Kearns 1995 [derived, REFERENCES.md A]: teaching dimension r + 1 for a monotone conjunction
        // of r of n variables (one positive example plus one negative per relevant variable).
        var items = Enumerable.Range(0, 1 << n).ToArray();
        var targetMask = (1 << r) - 1;
        var truth = items.Select(x => (x & targetMask) == targetMask ? 1 : 0).ToArray();
        var hypotheses = Enumerable.Range(0, 1 << n).Select(mask => items.Select(x => (byte)((x & mask) == mask ? 1 : 0)).ToArray());
        var model = Build(truth, hypotheses);
        var optimum = r + 1;
        Assert.True(model.CoverSequence.Count >= optimum, "no teaching set can be smaller than the teaching dimension");
        Assert.True(model.CoverSequence.Count <= Harmonic(1 << n) * optimum);
        Assert.Equal(optimum, model.CoverSequence.Count);
    }
}
