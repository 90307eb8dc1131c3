using System.Globalization;
using TeachServe.Core;
using TeachServe.Core.Projects;

namespace TeachServe.Benchmarks;

/// <summary>The compile benchmark's project shapes: items × features × labels.</summary>
public static class ProjectCases
{
    public const string Small = "569 x 30 x 2";
    public const string Wine = "178 x 13 x 3";
    public const string Digits = "1797 x 64 x 10";
    public const string Large = "20000 x 384 x 5";

    public static (int Items, int Features, int Labels) Shape(string name) => name switch
    {
        Small => (569, 30, 2),
        Wine => (178, 13, 3),
        Digits => (1_797, 64, 10),
        Large => (20_000, 384, 5),
        _ => throw new ArgumentException($"Unknown case '{name}'.", nameof(name)),
    };
}

/// <summary>
/// Seeded synthetic projects with real-looking numeric features (invented data; no real dataset is used):
/// class-structured Gaussian clusters seen through a random linear map, with overlap.
/// <list type="number">
/// <item>A latent space of r = min(d, 12) dimensions. Class c has a centre μ_c ~ N(0, s²·I_r) with
/// s = <see cref="Separation"/>; an item of class c (classes drawn uniformly) is z = μ_c + N(0, I_r).</item>
/// <item>Features x = A·z + 0.5·N(0, I_d), A a d × r matrix of N(0, 1/r) entries, then feature j is scaled by
/// e^{u_j}, u_j ~ U[−1, 1], and shifted by N(0, 4): correlated features of different units, most of the variance
/// in r principal directions, as in measured data (pixel intensities, lab values).</item>
/// <item>One item in five is in the test pool.</item>
/// </list>
/// Clusters overlap, so the fitted multinomial rule errs on some items: with s = 1.0 (seed 2026) 0.2 % of
/// 569 × 30 × 2, 4.5 % of 178 × 13 × 3 and 6.6 % of 1,797 × 64 × 10.
/// </summary>
public static class SyntheticProjects
{
    public const double Separation = 1.0;

    public static ProjectDefinition Clusters(int items, int features, int labels, ulong seed = 2026)
    {
        var random = new SeededRandom(seed);
        var r = Math.Min(features, 12);
        var centres = new double[labels][];
        for (var c = 0; c < labels; c++)
        {
            centres[c] = new double[r];
            for (var t = 0; t < r; t++)
            {
                centres[c][t] = Separation * random.NextGaussian();
            }
        }

        var map = new double[features, r];
        var scale = new double[features];
        var shift = new double[features];
        for (var j = 0; j < features; j++)
        {
            for (var t = 0; t < r; t++)
            {
                map[j, t] = random.NextGaussian() / Math.Sqrt(r);
            }

            scale[j] = Math.Exp((2 * random.NextDouble()) - 1);
            shift[j] = 2 * random.NextGaussian();
        }

        var names = Enumerable.Range(0, features).Select(j => "f" + j.ToString("D3", CultureInfo.InvariantCulture)).ToArray();
        var labelNames = Enumerable.Range(0, labels).Select(c => "class" + c.ToString(CultureInfo.InvariantCulture)).ToArray();
        var list = new List<ItemDefinition>(items);
        var z = new double[r];
        for (var i = 0; i < items; i++)
        {
            var label = random.NextInt(labels);
            for (var t = 0; t < r; t++)
            {
                z[t] = centres[label][t] + random.NextGaussian();
            }

            var values = new Dictionary<string, double>(features, StringComparer.Ordinal);
            for (var j = 0; j < features; j++)
            {
                var x = 0.5 * random.NextGaussian();
                for (var t = 0; t < r; t++)
                {
                    x += map[j, t] * z[t];
                }

                values[names[j]] = (x * scale[j]) + shift[j];
            }

            list.Add(new ItemDefinition
            {
                Id = "item-" + i.ToString("D5", CultureInfo.InvariantCulture),
                Pool = i % 5 == 4 ? Pools.Test : Pools.Teach,
                Label = labelNames[label],
                Features = values,
            });
        }

        var settings = new ProjectSettings
        {
            Name = $"synthetic {items} x {features} x {labels}",
            Labels = labelNames,
            Family = new FamilySettings { Kind = FamilyKinds.Linear },
        };
        return new ProjectDefinition(settings, list);
    }

    public static ProjectDefinition Of(string projectCase, ulong seed = 2026)
    {
        var (n, d, k) = ProjectCases.Shape(projectCase);
        return Clusters(n, d, k, seed);
    }
}
