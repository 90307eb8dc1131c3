using TeachServe.Core.Teaching;
using Xunit;

namespace TeachServe.Core.Tests.Engine;

/// <summary>The adaptive policy's opening items drawn among the near-best, so annotators do not all start alike.</summary>
public sealed class OpeningVarietyTests(SeedModels seeds) : IClassFixture<SeedModels>
{
    [Theory]
    [InlineData("leaf-symptoms")]
    [InlineData("weld-seams")]
    public void Opening_items_vary_between_sessions_and_each_is_within_the_tolerance_of_the_best_gain(string name)
    {
        var (project, model) = seeds.Get(name);
        var fromProject = SessionOptions.FromProject(project.Settings, 0);
        Assert.Equal(3, fromProject.Gate.OpeningVariety);
        var settings = fromProject with { Gate = fromProject.Gate with { OpeningVariety = 0 } };
        var prior = model.Prior.ToArray();
        var gains = ReferenceTeacher.AdaptiveGains(model, prior, prior, model.Q, settings.BlendWeight, new bool[model.TeachCount]);
        var best = gains.Max();

        var plain = Enumerable.Range(1, 40).Select(s => SessionRun.Start(model, settings with { Seed = (ulong)s }).CurrentItem).ToHashSet();
        Assert.Single(plain);

        var varied = Enumerable.Range(1, 40)
            .Select(s => SessionRun.Start(model, settings with { Seed = (ulong)s, Gate = settings.Gate with { OpeningVariety = 3 } }))
            .ToList();
        var firsts = varied.Select(r => r.CurrentItem).ToHashSet();
        Assert.True(firsts.Count >= 3, $"{firsts.Count} distinct first items");
        // The fast kernel sums in single precision: a relative slack of 1e-4 on the bound.
        Assert.All(firsts, x => Assert.True(gains[x] >= (0.9 * best) - (1e-4 * best), $"item {x}: gain {gains[x]} against best {best}"));

        // A replay with the same options draws the same opening.
        foreach (var run in varied.Take(5))
        {
            var labels = new List<int>();
            for (var i = 0; i < 3 && !run.IsEnded; i++)
            {
                var label = model.TrueLabel(run.CurrentItem);
                labels.Add(label);
                run.Answer(label);
            }

            var replay = SessionRun.Replay(model, run.Options, labels);
            Assert.Equal(run.CurrentItem, replay.CurrentItem);
        }
    }
}
