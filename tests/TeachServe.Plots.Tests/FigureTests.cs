using TeachServe.Core;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;

namespace TeachServe.Plots.Tests;

public class FigureTests
{
    private static string Hex(ScottPlot.Color c) => $"#{c.R:X2}{c.G:X2}{c.B:X2}";

    private static readonly HashSet<string> Eight = [.. OkabeIto.All.Select(Hex)];

    [Fact]
    public void Simulation_lines_and_their_legend_entries_are_in_their_policys_colour()
    {
        var results = PolicyNames.All.Select((p, i) => Samples.Simulation(p, LearnerVariant.Assumed, (ulong)(10 + i))).ToList();
        var svg = PlotOutput.Svg(SimulationCurves.Draw(results, "Demo", 0.1), PlotSize.Report);
        var legend = SvgSeries.LegendColours(svg);
        Assert.Equal(PolicyNames.All.Order(), legend.Keys.Order());
        Assert.All(PolicyNames.All, p => Assert.Equal(Hex(SeriesStyles.ForPolicy(p).Color), legend[p]));
        Assert.Equal(legend.Values.ToHashSet(), SvgSeries.LineColours(svg));
    }

    [Fact]
    public void Simulations_of_one_policy_and_several_learner_kinds_are_in_the_kinds_colours()
    {
        LearnerVariant[] kinds = [LearnerVariant.Assumed, LearnerVariant.Slow, LearnerVariant.Exemplar, LearnerVariant.PartialAttention];
        var results = kinds.Select((k, i) => Samples.Simulation("adaptive", k, (ulong)(20 + i))).ToList();
        var svg = PlotOutput.Svg(SimulationCurves.Draw(results, "Demo", 0.1), PlotSize.Report);
        var legend = SvgSeries.LegendColours(svg);
        Assert.All(kinds, k => Assert.Equal(Hex(SeriesStyles.ForLearnerKind(k).Color), legend[LearnerKinds.Name(k)]));
        Assert.Contains("(adaptive, n = 120 per line)", svg, StringComparison.Ordinal);
    }

    [Fact]
    public void Every_colour_in_a_figure_is_a_palette_colour_a_grey_or_white()
    {
        var results = new[] { Samples.Simulation("random", LearnerVariant.Assumed, 1), Samples.Simulation("easy-first", LearnerVariant.Assumed, 2) };
        var svg = PlotOutput.Svg(SimulationCurves.Draw(results, "Demo", 0.1), PlotSize.Report);
        foreach (var colour in SvgSeries.AllColours(svg))
        {
            var (r, g, b) = (Convert.ToInt32(colour[1..3], 16), Convert.ToInt32(colour[3..5], 16), Convert.ToInt32(colour[5..7], 16));
            // Greys (axes, grid, text, reference lines) are near-neutral: their channels differ by little.
            var grey = Math.Max(r, Math.Max(g, b)) - Math.Min(r, Math.Min(g, b)) <= 0x14;
            Assert.True(Eight.Contains(colour) || grey, $"{colour} is neither an Okabe–Ito colour nor a grey");
        }
    }

    [Fact]
    public void A_learning_curve_figure_starts_at_step_0_and_error_0_and_holds_every_point_band_and_the_target()
    {
        var random = new SeededRandom(3);
        for (var trial = 0; trial < 40; trial++)
        {
            var results = Enumerable.Range(0, 1 + random.NextInt(4))
                .Select(i => Samples.Simulation(PolicyNames.All[i], LearnerVariant.Assumed, random.NextUInt64())).ToList();
            var target = 0.02 + (0.3 * random.NextDouble());
            var limits = SimulationCurves.Draw(results, "Demo", target).Axes.GetLimits();
            Assert.Equal(0, limits.Left);
            Assert.InRange(limits.Bottom, -0.03 * limits.Top, 0);
            Assert.True(limits.Top <= 1);
            Assert.True(limits.Top >= target);
            foreach (var p in results.SelectMany(r => r.Curve))
            {
                Assert.True(p.Step <= limits.Right);
                Assert.True(p.High <= limits.Top && p.Low >= limits.Bottom, $"step {p.Step}: [{p.Low}, {p.High}] outside [{limits.Bottom}, {limits.Top}]");
            }
        }
    }

    [Fact]
    public void A_calibration_figure_has_one_range_on_both_axes_that_holds_every_point_and_interval()
    {
        var random = new SeededRandom(9);
        var predicted = Enumerable.Range(0, 30).Select(_ => 0.3 * random.NextDouble()).ToArray();
        var observed = predicted.Select(p => Math.Min(1, p + (0.1 * random.NextGaussian() * p))).Select(o => Math.Max(0, o)).ToArray();
        var high = observed.Select(o => Math.Min(1, o + 0.08)).ToArray();
        var limits = CalibrationFigure.Draw("t", "x", "y", new CalibrationSeries("bins", predicted, observed, observed.Select(o => Math.Max(0, o - 0.05)).ToArray(), high), 0.1).Axes.GetLimits();
        Assert.Equal((limits.Left, limits.Right), (limits.Bottom, limits.Top));
        Assert.True(limits.Left < 0, "a point at 0 is drawn whole");
        Assert.True(predicted.Concat(high).Append(0.1).All(v => v <= limits.Top));
        Assert.True(limits.Top < 0.6, "tight: the data end near 0.4, the axis does not run on to 1");
    }

    [Fact]
    public void The_same_figure_gives_the_same_svg_and_png_whatever_was_drawn_before()
    {
        var results = new[] { Samples.Simulation("cover", LearnerVariant.Assumed, 5), Samples.Simulation("adaptive", LearnerVariant.Assumed, 6) };
        var first = PlotOutput.Svg(SimulationCurves.Draw(results, "Demo", 0.1), PlotSize.Report);
        // Another picture in between moves the SVG writer's own counters on.
        _ = PlotOutput.Svg(SimulationCurves.Draw([Samples.Simulation("random", LearnerVariant.Slow, 7)], "Other", 0.2), PlotSize.Console);
        Assert.Equal(first, PlotOutput.Svg(SimulationCurves.Draw(results, "Demo", 0.1), PlotSize.Report));
        Assert.Equal(PlotOutput.Png(SimulationCurves.Draw(results, "Demo", 0.1), PlotSize.Report), PlotOutput.Png(SimulationCurves.Draw(results, "Demo", 0.1), PlotSize.Report));
    }

    [Fact]
    public void Svg_text_asks_for_a_sans_serif_face_and_png_and_svg_files_are_written()
    {
        var plot = SimulationCurves.Draw([Samples.Simulation("adaptive", LearnerVariant.Assumed, 8)], "Demo", 0.1);
        var svg = PlotOutput.Svg(plot, PlotSize.Report);
        Assert.DoesNotContain("Serif", svg, StringComparison.Ordinal);
        Assert.Contains("sans-serif", svg, StringComparison.Ordinal);
        var dir = Directory.CreateTempSubdirectory("teachserve-plots-");
        try
        {
            PlotOutput.SavePngAndSvg(plot, Path.Combine(dir.FullName, "curves"), PlotSize.Report);
            Assert.Equal(svg, File.ReadAllText(Path.Combine(dir.FullName, "curves.svg")));
            Assert.Equal([0x89, (byte)'P', (byte)'N', (byte)'G'], File.ReadAllBytes(Path.Combine(dir.FullName, "curves.png"))[..4]);
        }
        finally
        {
            dir.Delete(recursive: true);
        }
    }
}
