using ScottPlot;
using TeachServe.Core;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;

namespace TeachServe.Plots.Tests;

public class PaletteTests
{
    /// <summary>Okabe, M. &amp; Ito, K., "Color Universal Design (CUD)", 2008: the eight colours as the paper gives them in RGB 0–255.</summary>
    private static readonly (int R, int G, int B)[] Paper =
    [
        (0, 0, 0), (230, 159, 0), (86, 180, 233), (0, 158, 115), (240, 228, 66), (0, 114, 178), (213, 94, 0), (204, 121, 167),
    ];

    private static readonly HashSet<string> Eight = [.. Paper.Select(c => $"#{c.R:X2}{c.G:X2}{c.B:X2}")];

    private static string Hex(Color c) => $"#{c.R:X2}{c.G:X2}{c.B:X2}";

    private static IEnumerable<string> UnknownNames()
    {
        var random = new SeededRandom(14);
        for (var i = 0; i < 300; i++)
        {
            yield return string.Concat(Enumerable.Range(0, 3 + random.NextInt(12)).Select(_ => (char)('a' + random.NextInt(26))));
        }
    }

    [Fact]
    public void The_palette_is_the_eight_colours_of_the_paper_in_its_order()
    {
        Assert.Equal(Paper, OkabeIto.All.Select(c => ((int)c.R, (int)c.G, (int)c.B)));
        Assert.All(OkabeIto.All, c => Assert.Equal(255, c.A));
    }

    [Fact]
    public void Every_style_of_a_policy_a_learner_kind_an_unknown_name_or_neutral_data_is_one_of_the_eight()
    {
        var styles = PolicyNames.All.Select(SeriesStyles.ForPolicy)
            .Concat(Enum.GetValues<LearnerVariant>().Select(SeriesStyles.ForLearnerKind))
            .Concat(UnknownNames().Select(SeriesStyles.ForPolicy))
            .Append(SeriesStyles.Neutral);
        Assert.All(styles, s => Assert.Contains(Hex(s.Color), Eight));
    }

    [Fact]
    public void The_five_policies_differ_in_colour_and_in_marker_and_none_is_yellow_or_black()
    {
        var styles = PolicyNames.All.Select(SeriesStyles.ForPolicy).ToList();
        Assert.Equal(5, styles.Select(s => s.Color).Distinct().Count());
        Assert.Equal(5, styles.Select(s => s.Marker).Distinct().Count());
        // Yellow is too faint for a line on white; black is kept for data of no policy.
        Assert.DoesNotContain(styles, s => s.Color == OkabeIto.Yellow || s.Color == OkabeIto.Black);
    }

    [Fact]
    public void Every_learner_kind_has_a_marker_of_its_own()
    {
        var kinds = Enum.GetValues<LearnerVariant>();
        Assert.Equal(kinds.Length, kinds.Select(k => SeriesStyles.ForLearnerKind(k).Marker).Distinct().Count());
    }

    [Fact]
    public void No_two_series_of_a_policy_by_kind_simulation_look_alike()
    {
        var styles = (from p in PolicyNames.All from k in Enum.GetValues<LearnerVariant>() select SeriesStyles.ForSimulation(p, k, true, true)).ToList();
        Assert.Equal(styles.Count, styles.Distinct().Count());
        // ... and the colour still says the policy.
        Assert.All(PolicyNames.All, p => Assert.All(Enum.GetValues<LearnerVariant>(), k =>
            Assert.Equal(SeriesStyles.ForPolicy(p).Color, SeriesStyles.ForSimulation(p, k, true, true).Color)));
        Assert.Equal(SeriesStyles.ForLearnerKind(LearnerVariant.Exemplar), SeriesStyles.ForSimulation("random", LearnerVariant.Exemplar, false, true));
        Assert.Equal(SeriesStyles.ForPolicy("cover"), SeriesStyles.ForSimulation("cover", LearnerVariant.Slow, true, false));
    }

    [Fact]
    public void An_unknown_name_gets_the_same_style_in_every_process_from_colours_no_policy_has()
    {
        var policyColours = PolicyNames.All.Select(p => SeriesStyles.ForPolicy(p).Color).ToHashSet();
        Assert.All(UnknownNames(), n =>
        {
            Assert.Equal(SeriesStyles.ForPolicy(n), SeriesStyles.ForPolicy(new string(n.ToCharArray())));
            Assert.DoesNotContain(SeriesStyles.ForPolicy(n).Color, policyColours);
        });
        // Pinned: string.GetHashCode would change from run to run, and so would this.
        Assert.Equal(new SeriesStyle(OkabeIto.SkyBlue, MarkerShape.OpenTriangleDown), SeriesStyles.ForPolicy("thompson-sampling"));
        // The hash spreads names over all three spare colours.
        Assert.Equal(3, UnknownNames().Select(n => SeriesStyles.ForPolicy(n).Color).Distinct().Count());
    }

    [Fact]
    public void Arms_of_one_policy_share_its_colour_and_differ_in_marker()
    {
        var styles = SeriesStyles.ForArms(["random", "adaptive", "adaptive", "adaptive", "cover"]);
        Assert.Equal(SeriesStyles.ForPolicy("random"), styles[0]);
        Assert.Equal(SeriesStyles.ForPolicy("adaptive"), styles[1]);
        Assert.Equal(SeriesStyles.ForPolicy("cover"), styles[4]);
        Assert.All(styles.Skip(1).Take(3), s => Assert.Equal(OkabeIto.Blue, s.Color));
        Assert.Equal(3, styles.Skip(1).Take(3).Select(s => s.Marker).Distinct().Count());
    }
}
