using MathNet.Numerics.LinearAlgebra;
using TeachServe.Core.Hypotheses;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Engine;

public class WideLinearFamilyTests
{
    private static (FeatureColumns Columns, double[][] Rows, int[] Labels) Standardised(ProjectDefinition project)
    {
        var labelIndex = project.Settings.Labels.Select((n, i) => (n, i)).ToDictionary(t => t.n, t => t.i, StringComparer.Ordinal);
        var labels = project.Items.Select(i => labelIndex[i.Label]).ToArray();
        var input = new FamilyInput(project.Items, labels, project.Settings.Labels.Count, project.Settings.Family);
        var (_, rows) = input.StandardisedFeatures();
        return (new FeatureColumns(rows), rows, labels);
    }

    [Fact]
    public void Principal_directions_are_orthonormal_and_match_the_right_singular_vectors_of_the_items()
    {
        var (columns, rows, _) = Standardised(CompileEquivalenceTests.RandomProject(31, 150, 12, 3));
        var basis = WideLinearFamily.PrincipalBasis(columns, 5);
        var gram = basis.TransposeThisAndMultiply(basis);
        for (var a = 0; a < 5; a++)
        {
            for (var b = 0; b < 5; b++)
            {
                AssertNear.Absolute(a == b ? 1.0 : 0.0, gram[a, b], 1e-10, $"gram[{a},{b}]");
            }
        }

        // The columns are centred (standardised), so XᵀX's eigenvectors are X's right singular vectors, up to sign.
        var svd = Matrix<double>.Build.DenseOfRowArrays(rows).Svd(computeVectors: true);
        for (var t = 0; t < 5; t++)
        {
            var expected = svd.VT.Row(t);
            AssertNear.Absolute(1.0, Math.Abs(expected.DotProduct(basis.Column(t))), 1e-8, $"direction {t}");
        }
    }

    [Fact]
    public void Pair_confusions_change_only_labels_between_their_pair()
    {
        var (columns, _, labels) = Standardised(CompileEquivalenceTests.RandomProject(32, 240, 6, 4));
        var fitted = SoftmaxFit.Fit(columns, labels, 4);
        var target = columns.Predict(fitted);
        var pool = new HypothesisPool(columns.Count, 4);
        WideLinearFamily.AddPairConfusions(columns, fitted, target, pool, 1.0);
        Assert.Equal(6 * 8, pool.Generated);
        var changedPairs = new HashSet<(int, int)>();
        foreach (var prediction in pool.Predictions)
        {
            var changed = Enumerable.Range(0, target.Length).Where(i => prediction[i] != target[i]).ToArray();
            if (changed.Length == 0)
            {
                continue;
            }

            var pair = changed.SelectMany(i => new[] { (int)prediction[i], target[i] }).Distinct().Order().ToArray();
            Assert.True(pair.Length <= 2, $"a confusion rule changed labels among {string.Join(",", pair)}");
            changedPairs.Add((pair[0], pair[^1]));
        }

        // Every pair of labels has at least one rule that moves items between them.
        Assert.Equal(6, changedPairs.Count);
    }

    [Fact]
    public void Infinite_shifts_give_one_label_of_the_pair_to_all_its_items()
    {
        var (columns, _, labels) = Standardised(CompileEquivalenceTests.RandomProject(33, 200, 5, 3));
        var fitted = SoftmaxFit.Fit(columns, labels, 3);
        var target = columns.Predict(fitted);
        var pool = new HypothesisPool(columns.Count, 3);
        WideLinearFamily.AddPairConfusions(columns, fitted, target, pool, 1.0);
        var allToZero = target.Select(l => l == 1 ? (byte)0 : l).ToArray();
        var allToOne = target.Select(l => l == 0 ? (byte)1 : l).ToArray();
        Assert.True(pool.IndexOf(allToZero) >= 0);
        Assert.True(pool.IndexOf(allToOne) >= 0);
    }

    [Fact]
    public void Prior_mass_near_target_sums_the_prior_of_rules_within_the_limit_without_the_truth()
    {
        // Five items, truth 0 0 0 1 1: errors 0.2 (weight 1, at the default limit 0.1 + 0.1) and 0.4 (weight 2);
        // the truth joins with the mean weight per rule, 1.5, so the prior is 1/4.5, 2/4.5, 1.5/4.5 and the mass within
        // 0.2 (without the truth) is 1/4.5 = 2/9.
        int[] truth = [0, 0, 0, 1, 1];
        var hypotheses = new List<(byte[], double)>
        {
            ([1, 0, 0, 1, 1], 1.0),
            ([1, 1, 0, 1, 1], 2.0),
        };
        var model = ModelCompiler.FromPredictions(["a", "b"], ["i0", "i1", "i2", "i3", "i4"], 3, truth, hypotheses, new LearnerSettings());
        Assert.Equal(3, model.HypothesisCount);
        AssertNear.Absolute(0.2, model.Summary.NearTargetErrorLimit, 1e-15);
        AssertNear.Absolute(2.0 / 9.0, model.Summary.PriorMassNearTarget, 1e-15);
    }

    [Fact]
    public void Prior_mass_near_target_uses_the_gate_target()
    {
        var project = CompileEquivalenceTests.RandomProject(34, 160, 10, 3);
        project = project with { Settings = project.Settings with { Gate = project.Settings.Gate with { TargetError = 0.15 } } };
        var model = ModelCompiler.Compile(project);
        AssertNear.Absolute(0.25, model.Summary.NearTargetErrorLimit, 1e-15);
        var expected = 0.0;
        for (var h = 0; h < model.HypothesisCount; h++)
        {
            if (h != model.TargetIndex && model.Error[h] <= 0.25)
            {
                expected += model.Prior[h];
            }
        }

        Assert.True(expected > 0, "the test project should have rules near the target");
        AssertNear.Relative(expected, model.Summary.PriorMassNearTarget, 1e-12);
    }

    [Theory]
    [InlineData(41UL, 3, 4)]
    [InlineData(42UL, 2, 5)]
    [InlineData(43UL, 3, 60)]
    public void The_fit_reaches_the_minimum_that_MathNet_BFGS_finds(ulong seed, int k, int d)
    {
        // d = 60 with 3 labels has 183 weights: the L-BFGS path; the others take Newton's method.
        var (columns, rows, labels) = Standardised(CompileEquivalenceTests.RandomProject(seed, 200, d, k));
        var fitted = SoftmaxFit.Fit(columns, labels, k);
        var gradient = SoftmaxFit.Gradient(columns, labels, fitted);
        Assert.All(gradient, g => Assert.True(Math.Abs(g) <= SoftmaxFit.GradientTolerance * 200, $"gradient component {g}"));

        var reference = ReferenceLogisticFit.Fit(rows, labels, k);
        var referenceGradient = SoftmaxFit.Gradient(columns, labels, reference);
        // The same strictly convex objective: both points are near its one minimum (MathNet stops at |g| ≤ 1e-6
        // or on its own limits), so the weights agree to the accuracy the looser of the two stops allows.
        var scale = Math.Max(1e-3, referenceGradient.Max(Math.Abs)) * 10;
        for (var c = 0; c < k; c++)
        {
            for (var j = 0; j <= d; j++)
            {
                AssertNear.Absolute(reference[c][j], fitted[c][j], scale, $"w[{c}][{j}]");
            }
        }
    }

    [Fact]
    public void Wide_projects_keep_the_target_fit_and_are_deterministic()
    {
        var project = CompileEquivalenceTests.RandomProject(44, 200, 3, 4);
        var first = ModelCompiler.Compile(project);
        var second = ModelCompiler.Compile(project);
        CompileEquivalenceTests.AssertSameModel(first, second);
        var (columns, _, labels) = Standardised(project);
        var model = first;
        var target = columns.Predict(SoftmaxFit.Fit(columns, labels, 4));
        var mistakes = Enumerable.Range(0, target.Length).Count(i => target[i] != labels[i]);
        Assert.True(mistakes > 0, "the test project should not be separable");
        Assert.Contains(Enumerable.Range(0, model.HypothesisCount), h => Math.Abs(model.Error[h] - ((double)mistakes / target.Length)) < 1e-12);
    }
}
