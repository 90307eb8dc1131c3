using MathNet.Numerics.LinearAlgebra;
using TeachServe.Core.Hypotheses;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Engine;

public class EmbeddingFamilyTests
{
    /// <summary>Rows with a decaying spectrum: row i = Σ_j s_j·z_ij·u_j + small noise, s_j = 0.8^j, seeded.</summary>
    private static float[][] DecayingRows(int n, int d, int seed)
    {
        var random = new SeededRandom((ulong)seed);
        var directions = Matrix<double>.Build.Dense(d, d, (_, _) => random.NextGaussian()).QR().Q;
        var rows = new float[n][];
        for (var i = 0; i < n; i++)
        {
            var row = new double[d];
            for (var j = 0; j < Math.Min(d, 40); j++)
            {
                var z = Math.Pow(0.8, j) * random.NextGaussian();
                for (var c = 0; c < d; c++) row[c] += z * directions[c, j];
            }
            rows[i] = row.Select(v => (float)(v + (0.001 * random.NextGaussian()))).ToArray();
        }
        return rows;
    }

    private static Matrix<double> CentredMatrix(float[][] rows)
    {
        var x = Matrix<double>.Build.DenseOfRowArrays(rows.Select(r => r.Select(v => (double)v).ToArray()));
        var means = x.ColumnSums() / x.RowCount;
        for (var i = 0; i < x.RowCount; i++) x.SetRow(i, x.Row(i) - means);
        return x;
    }

    [Fact]
    public void Exact_components_are_the_right_singular_vectors_of_the_centred_rows()
    {
        // Independent reference: MathNet's SVD of the centred data matrix (right singular vectors, descending σ),
        // against our eigen-decomposition of XᵀX; equal up to sign.
        var rows = DecayingRows(120, 24, 5);
        var x = CentredMatrix(rows);
        var basis = PrincipalComponents.ExactBasis(x, 6);
        var svd = x.Svd(computeVectors: true);
        for (var t = 0; t < 6; t++)
            AssertNear.Absolute(1.0, Math.Abs(svd.VT.Row(t).DotProduct(basis.Column(t))), 1e-8, $"component {t}");

        var (scores, explained) = PrincipalComponents.Project(rows, 6, 1);
        var expected = svd.S.Take(6).Sum(s => s * s) / svd.S.Sum(s => s * s);
        AssertNear.Absolute(expected, explained, 1e-9, "explained variance");
        // Scores are X·v: their squared norms are σ².
        for (var t = 0; t < 6; t++)
            AssertNear.Relative(svd.S[t] * svd.S[t], scores.Sum(r => r[t] * r[t]), 1e-8, $"σ² of {t}");
    }

    [Fact]
    public void Randomized_components_of_long_vectors_match_the_exact_ones()
    {
        // 600 columns is above the exact limit; the decaying spectrum (ratio 0.8) is what sentence embeddings show.
        var rows = DecayingRows(300, PrincipalComponents.ExactLimit + 88, 7);
        var x = CentredMatrix(rows);
        var exact = PrincipalComponents.ExactBasis(x, 8);
        var randomized = PrincipalComponents.RandomizedBasis(x, 8, 3);
        for (var t = 0; t < 8; t++)
            Assert.True(Math.Abs(exact.Column(t).DotProduct(randomized.Column(t))) > 0.999, $"component {t}: |cos| {Math.Abs(exact.Column(t).DotProduct(randomized.Column(t)))}");
    }

    [Fact]
    public void Projection_is_reproducible_and_sign_fixed()
    {
        var rows = DecayingRows(80, 700, 11);
        var (a, _) = PrincipalComponents.Project(rows, 5, 9);
        var (b, _) = PrincipalComponents.Project(rows, 5, 9);
        Assert.Equal(a.SelectMany(r => r), b.SelectMany(r => r));
    }

    private static ProjectSettings Settings(string kind, int labels = 3) => new()
    {
        Name = "vectors",
        Labels = [.. Enumerable.Range(0, labels).Select(i => $"class{i}")],
        Family = new FamilySettings { Kind = kind, Dimensions = 8 },
        Gate = new GateSettings { Test = new TestSettings { MaxItems = 30, Delta = 0.3 } },
    };

    /// <summary>Three classes around three centres in 64 dimensions, label from the nearest centre (seeded).</summary>
    private static List<ItemDefinition> ClusteredItems(int n, int d, int seed)
    {
        var random = new SeededRandom((ulong)seed);
        var centres = Enumerable.Range(0, 3).Select(_ => Enumerable.Range(0, d).Select(_ => 2 * random.NextGaussian()).ToArray()).ToArray();
        var items = new List<ItemDefinition>();
        for (var i = 0; i < n; i++)
        {
            var c = i % 3;
            var v = centres[c].Select(m => (float)(m + (1.5 * random.NextGaussian()))).ToArray();
            var nearest = Enumerable.Range(0, 3).MinBy(k => centres[k].Zip(v, (m, x) => (m - x) * (m - x)).Sum());
            items.Add(new ItemDefinition
            {
                Id = $"v{i:000}", Pool = i % 2 == 0 ? Pools.Teach : Pools.Test, Label = $"class{nearest}",
                Embedding = v, Content = new ItemContent { Text = $"item {i}" },
            });
        }
        return items;
    }

    [Fact]
    public void An_embedding_project_compiles_linear_rules_on_its_components_and_reports_vectors_and_memory()
    {
        var items = ClusteredItems(180, 64, 21);
        var settings = Settings(FamilyKinds.Embedding);
        Assert.Empty(ProjectValidator.Validate(settings, items));
        var model = ModelCompiler.Compile(new ProjectDefinition(settings, items));
        var s = model.Summary;
        Assert.Equal(FamilyKinds.Embedding, s.Family);
        Assert.NotNull(s.Vectors);
        Assert.Null(s.Vectors!.Model);
        Assert.Equal(64, s.Vectors.Length);
        Assert.Equal(8, s.Vectors.Dimensions);
        Assert.InRange(s.Vectors.ExplainedVariance, 0.05, 1.0);
        // The rules stay near the target: the fitted rule on 8 components separates clusters 2 sd apart well.
        Assert.True(s.PriorMassNearTarget > 0.05, $"prior mass near target {s.PriorMassNearTarget}");
        // Memory: at least the mistake bits (one bit per item and hypothesis) and the predictions (three labels: a byte each).
        Assert.True(s.MemoryBytes >= ((long)model.ItemCount * model.HypothesisCount) + (model.ItemCount * model.HypothesisCount / 8),
            $"memory {s.MemoryBytes} for {model.ItemCount} items × {model.HypothesisCount} hypotheses");
    }

    [Fact]
    public void Vectors_of_another_length_missing_or_not_finite_are_named_by_item_and_field()
    {
        var items = ClusteredItems(12, 6, 3);
        items[4] = items[4] with { Embedding = [1, 2, 3] };
        items[5] = items[5] with { Embedding = null };
        items[6] = items[6] with { Embedding = [1, 2, float.NaN, 4, 5, 6] };
        items[7] = items[7] with { Embedding = new float[EmbeddingFeatures.MaxVectorLength + 1] };
        var sources = new ProjectSources("project.json", "items.jsonl", [.. Enumerable.Range(1, items.Count)]);
        var problems = ProjectValidator.Validate(Settings(FamilyKinds.Embedding), items, sources);
        Assert.Contains(problems, p => p is { Line: 5, Field: "items[4].embedding" } && p.Message.Contains("3 numbers; items[0] has 6", StringComparison.Ordinal));
        Assert.Contains(problems, p => p is { Line: 6, Field: "items[5].embedding" } && p.Message.Contains("has none", StringComparison.Ordinal));
        Assert.Contains(problems, p => p is { Line: 7, Field: "items[6].embedding[2]" } && p.Message.Contains("not a finite number", StringComparison.Ordinal));
        Assert.Contains(problems, p => p is { Line: 8, Field: "items[7].embedding" } && p.Message.Contains("1 to 4096", StringComparison.Ordinal));
        Assert.Equal(4, problems.Count);
    }

    [Fact]
    public void Text_items_need_a_text_within_the_limit_and_dimensions_are_bounded()
    {
        var items = ClusteredItems(12, 6, 3).Select(i => i with { Embedding = null }).ToList();
        items[1] = items[1] with { Content = new ItemContent { Text = "   ", ImageUrl = "https://example.org/a.png" } };
        items[2] = items[2] with { Content = new ItemContent { Text = new string('a', EmbeddingFeatures.MaxTextLength + 1) } };
        var sources = new ProjectSources("project.json", "items.jsonl", [.. Enumerable.Range(1, items.Count)]);
        var problems = ProjectValidator.Validate(Settings(FamilyKinds.Text) with { Family = new FamilySettings { Kind = FamilyKinds.Text, Dimensions = 1 } }, items, sources);
        Assert.Contains(problems, p => p is { Line: 2, Field: "items[1].content.text" } && p.Message.Contains("empty", StringComparison.Ordinal));
        Assert.Contains(problems, p => p is { Line: 3, Field: "items[2].content.text" } && p.Message.Contains("501 characters", StringComparison.Ordinal));
        Assert.Contains(problems, p => p is { Field: "family.dimensions" });
        Assert.Equal(3, problems.Count);
    }
}
