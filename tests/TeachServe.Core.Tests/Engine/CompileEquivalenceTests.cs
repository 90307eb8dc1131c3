using System.Globalization;
using TeachServe.Core.Hypotheses;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Engine;

/// <summary>
/// The compile-speed changes that claim identical results, checked against the code path they replaced
/// (<see cref="ReferenceLinearFamily"/>): same hypotheses in the same order, same prior, same mistake matrix.
/// </summary>
public class CompileEquivalenceTests
{
    /// <summary>Small seeded projects: Gaussian clusters in d dimensions, K labels, an overlap of about 10 %.</summary>
    internal static ProjectDefinition RandomProject(ulong seed, int items, int features, int labels, int randomDirections = 40, int copies = 5)
    {
        var random = new SeededRandom(seed);
        var centres = Enumerable.Range(0, labels).Select(_ => Enumerable.Range(0, features).Select(_ => 1.5 * random.NextGaussian()).ToArray()).ToArray();
        var names = Enumerable.Range(0, features).Select(j => "f" + j.ToString(CultureInfo.InvariantCulture)).ToArray();
        var labelNames = Enumerable.Range(0, labels).Select(c => "c" + c.ToString(CultureInfo.InvariantCulture)).ToArray();
        var list = new List<ItemDefinition>();
        for (var i = 0; i < items; i++)
        {
            var label = random.NextInt(labels);
            list.Add(new ItemDefinition
            {
                Id = "i" + i.ToString(CultureInfo.InvariantCulture),
                Pool = i % 4 == 3 ? Pools.Test : Pools.Teach,
                Label = labelNames[label],
                Features = names.Select((n, j) => (n, v: (centres[label][j] + random.NextGaussian()) * (j + 1))).ToDictionary(t => t.n, t => t.v, StringComparer.Ordinal),
            });
        }

        var settings = new ProjectSettings
        {
            Name = "random",
            Labels = labelNames,
            Family = new FamilySettings { Kind = FamilyKinds.Linear, Seed = (int)seed, RandomDirections = randomDirections, PerturbedCopies = copies },
        };
        return new ProjectDefinition(settings, list);
    }

    internal static ModelVersion CompileReference(ProjectDefinition project) =>
        ModelCompiler.Compile(project, new CompileProgressReporter(null), (input, pool, _) => ReferenceLinearFamily.Generate(input, pool), CancellationToken.None);

    internal static void AssertSameModel(ModelVersion expected, ModelVersion actual)
    {
        Assert.Equal(expected.HypothesisCount, actual.HypothesisCount);
        Assert.Equal(expected.TargetIndex, actual.TargetIndex);
        Assert.Equal(expected.Summary.HypothesesGenerated, actual.Summary.HypothesesGenerated);
        Assert.True(expected.Prior.SequenceEqual(actual.Prior), "prior differs");
        Assert.True(expected.MistakeBits.SequenceEqual(actual.MistakeBits), "mistake matrix differs");
        Assert.True(expected.PredictionBytes.SequenceEqual(actual.PredictionBytes), "predictions differ");
        Assert.Equal(expected.GreedySequence, actual.GreedySequence);
        Assert.Equal(expected.CoverSequence, actual.CoverSequence);
        Assert.Equal(expected.EasyFirstOrder, actual.EasyFirstOrder);
    }

    /// <summary>Two labels and at most <see cref="LinearFamily.LowDimensionLimit"/> features keep the original generator.</summary>
    [Theory]
    [InlineData(11UL, 2, 3)]
    [InlineData(12UL, 2, 6)]
    public void Small_projects_compile_as_before(ulong seed, int labels, int features)
    {
        var project = RandomProject(seed, 120, features, labels);
        AssertSameModel(CompileReference(project), ModelCompiler.Compile(project));
    }

    [Fact]
    public void The_linear_seed_project_compiles_as_before()
    {
        var project = ProjectFolder.Load(Path.Combine(SeedModels.RepositoryRoot(), "seed-projects", "weld-seams"));
        Assert.Equal(FamilyKinds.Linear, project.Settings.Family.Kind);
        AssertSameModel(CompileReference(project), ModelCompiler.Compile(project));
    }

    [Theory]
    [InlineData(21UL, 3)]
    [InlineData(22UL, 7)]
    [InlineData(23UL, 1)]
    public void Column_predictions_equal_row_predictions_bit_for_bit(ulong seed, int labels)
    {
        // Sizes across the SIMD width and the 256-item block; some weights exactly zero, as in one-feature rules.
        var random = new SeededRandom(seed);
        foreach (var n in new[] { 1, 3, 255, 256, 257, 600 })
        {
            var d = 1 + random.NextInt(9);
            var rows = Enumerable.Range(0, n).Select(_ => Enumerable.Range(0, d).Select(_ => random.NextGaussian()).ToArray()).ToArray();
            var weights = Enumerable.Range(0, labels).Select(_ => Enumerable.Range(0, d + 1).Select(_ => random.NextInt(3) == 0 ? 0.0 : random.NextGaussian()).ToArray()).ToArray();
            var expected = ReferenceLogisticFit.Predict(rows, weights);
            Assert.Equal(expected, new FeatureColumns(rows).Predict(weights));
        }
    }

    [Fact]
    public void Column_predictions_take_the_first_of_equal_scores()
    {
        double[][] rows = [[1.0], [-1.0], [0.0]];
        // Classes 1 and 2 tie everywhere, all three tie at 0; class 0 wins on the negative item.
        double[][] weights = [[-1.0, 0.0], [0.5, 0.0], [0.5, 0.0]];
        Assert.Equal(new byte[] { 1, 0, 0 }, new FeatureColumns(rows).Predict(weights));
    }
}
