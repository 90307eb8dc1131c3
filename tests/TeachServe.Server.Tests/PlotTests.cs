using System.Net.Http.Json;
using System.Text.Json;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Core;
using TeachServe.Core.Experiments;
using TeachServe.Core.Simulation;
using TeachServe.Plots;
using TeachServe.Plots.Tests;
using TeachServe.Server.Experiments;
using TeachServe.Server.OwnerConsole;
using TeachServe.Server.Persistence;
using TeachServe.Server.Simulations;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Tests;

public sealed class PlotTests
{
    private static readonly string[] ArmPolicies = ["random", "stochastic-greedy", "adaptive"];

    private static string Hex(ScottPlot.Color c) => $"#{c.R:X2}{c.G:X2}{c.B:X2}";

    private static List<SimulationResult> SampleResults() =>
        ArmPolicies.Select((p, i) => Samples.Simulation(p, LearnerVariant.Assumed, (ulong)(40 + i))).ToList();

    /// <summary>A finished simulation job with the given results, as the queue would leave it (no run, so no waiting).</summary>
    private static async Task<string> StoreSimulationAsync(TestApp app, TestApp.Keys keys, List<SimulationResult> results)
    {
        var id = "sim_" + Infrastructure.Ids.Base32(new byte[] { 1, 2, 3, 4, 5, 6, 7, 8, 9, (byte)results.Count });
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        db.Set<SimulationJob>().Add(new SimulationJob
        {
            Id = id, ProjectId = keys.ProjectId, ModelVersion = 1, Status = SimulationStatuses.Succeeded, Progress = 1,
            RequestJson = JsonSerializer.Serialize(new CreateSimulationRequest { Policies = [.. results.Select(r => r.Policy).Distinct()], Learners = 120 }, TeachServe.Server.Infrastructure.Json.Results),
            ResultJson = JsonSerializer.Serialize(results, TeachServe.Server.Infrastructure.Json.Results),
            CreatedAt = app.Time.GetUtcNow(), FinishedAt = app.Time.GetUtcNow(),
        });
        await db.SaveChangesAsync();
        return id;
    }

    [Fact]
    public async Task An_experiment_arm_and_a_simulation_line_of_the_same_policy_are_drawn_in_the_same_colour()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        string[] arms = ["control", "greedy", "ours"];
        var created = await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/experiments", new
        {
            name = "colours",
            arms = arms.Select((a, i) => new { name = a, policy = ArmPolicies[i] }).ToArray(),
        }), 201);
        var experiment = created["experimentId"]!.GetValue<string>();
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/experiments/{experiment}/start", null), 200);
        for (var i = 0; i < 12; i++)
            await SimulatedAnnotators.RunAsync(app, keys, $"w-{i:00}", alpha: 1.5, lapse: 0.05, seed: (ulong)(500 + i));
        var experimentSvg = await owner.GetStringAsync($"/api/v1/experiments/{experiment}/plots/learning-curves.svg");

        var simulation = await StoreSimulationAsync(app, keys, SampleResults());
        var simulationSvg = await owner.GetStringAsync($"/api/v1/simulations/{simulation}/plots/learning-curves.svg");

        var byArm = SvgSeries.LegendColours(experimentSvg);
        var byPolicy = SvgSeries.LegendColours(simulationSvg);
        Assert.Equal(ArmPolicies.Order(), byPolicy.Keys.Order());
        var matched = 0;
        for (var arm = 0; arm < arms.Length; arm++)
        {
            var entry = byArm.Keys.SingleOrDefault(label => label.StartsWith(arms[arm] + " (n = ", StringComparison.Ordinal));
            if (entry is null) continue; // an arm nobody was assigned to has no curve
            Assert.Equal(byPolicy[ArmPolicies[arm]], byArm[entry]);
            Assert.Equal(Hex(SeriesStyles.ForPolicy(ArmPolicies[arm]).Color), byArm[entry]);
            matched++;
        }
        Assert.True(matched >= 2, $"only {matched} arms drew a curve");
        // The lines themselves carry the legend's colours and no others.
        Assert.Equal(byArm.Values.ToHashSet(), SvgSeries.LineColours(experimentSvg));
        Assert.Equal(byPolicy.Values.ToHashSet(), SvgSeries.LineColours(simulationSvg));
    }

    [Fact]
    public async Task The_simulation_plot_endpoints_serve_the_shared_figure_of_the_stored_results()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var results = SampleResults();
        var id = await StoreSimulationAsync(app, keys, results);
        var version = await app.Service<ModelVersionCache>().GetAsync(keys.ProjectId, 1, CancellationToken.None);
        var figure = SimulationCurves.Draw(results, version.Settings.Name, version.Settings.Gate.TargetError);

        // What `teachserve simulate --compare` writes for the same results (Core.Tests check the CLI side).
        Assert.Equal(PlotOutput.Svg(figure, PlotSize.Report), await owner.GetStringAsync($"/api/v1/simulations/{id}/plots/learning-curves.svg"));
        Assert.Equal(PlotOutput.Png(figure, PlotSize.Report), await owner.GetByteArrayAsync($"/api/v1/simulations/{id}/plots/learning-curves.png"));
        Assert.Contains("Seam check: simulated learners", PlotOutput.Svg(figure, PlotSize.Report), StringComparison.Ordinal);
    }

    private static (ExperimentDefinition, ExperimentReportResult) SampleReport(ulong seed)
    {
        var definition = new ExperimentDefinition
        {
            Name = "sample", Salt = "s",
            Arms = [.. ArmPolicies.Select((p, i) => new ArmDefinition { Name = $"arm {i}", Policy = p }), new ArmDefinition { Name = "arm 3", Policy = "adaptive" }],
        };
        var random = new SeededRandom(seed);
        var outcomes = Enumerable.Range(0, 80).Select(i =>
        {
            var taught = 3 + random.NextInt(12);
            var answered = 6 + random.NextInt(10);
            var curve = Enumerable.Range(0, taught + 1).Select(s => 0.5 * Math.Exp(-0.3 * s * (0.5 + random.NextDouble()))).ToArray();
            return new AnnotatorOutcome(i % 4, $"w{i}", DateTimeOffset.UnixEpoch, true, random.NextInt(3) > 0, answered,
                random.NextInt(1 + (answered / 2)), taught, null, curve[^1], curve);
        }).ToList();
        return (definition, ExperimentReport.Compute(definition, outcomes));
    }

    [Fact]
    public void Experiment_figures_hold_every_point_count_annotators_from_0_and_draw_each_arm_in_its_policys_colour()
    {
        var (definition, report) = SampleReport(21);
        var histogram = ExperimentPlots.Draw(ExperimentPlots.TestError, report, definition).Axes.GetLimits();
        Assert.Equal((0.0, 0.0), (histogram.Left, histogram.Bottom));
        foreach (var bin in report.Arms.SelectMany(a => a.TestErrorHistogram).Where(b => b.Count > 0))
        {
            Assert.True(bin.High <= histogram.Right && bin.Count < histogram.Top, $"bin [{bin.Low}, {bin.High}) × {bin.Count} outside the axes");
        }

        var curves = ExperimentPlots.Draw(ExperimentPlots.LearningCurves, report, definition);
        var limits = curves.Axes.GetLimits();
        Assert.Equal(0, limits.Left);
        Assert.True(limits.Bottom <= 0);
        Assert.All(report.Arms.SelectMany(a => a.LearningCurve), p =>
            Assert.True(p.Step <= limits.Right && p.MeanPredictedError <= limits.Top && !(p.High > limits.Top)));
        var legend = SvgSeries.LegendColours(PlotOutput.Svg(curves, PlotSize.Report));
        foreach (var arm in report.Arms)
            Assert.Equal(Hex(SeriesStyles.ForPolicy(definition.Arms[arm.Arm].Policy).Color), legend[$"{arm.Name} (n = {arm.Started})"]);
    }

    [Fact]
    public void Console_pictures_start_items_and_annotators_at_0_and_hold_every_value()
    {
        var random = new SeededRandom(8);
        var items = Enumerable.Range(0, 60).Select(_ => 12 + random.NextInt(40)).ToList();
        var histogram = ConsolePlots.ItemsToRelease(items).Axes.GetLimits();
        Assert.Equal((0.0, 0.0), (histogram.Left, histogram.Bottom));
        Assert.True(items.Max() < histogram.Right);
        var (_, _, counts) = ConsolePlots.Bins(items);
        Assert.True(counts.Max() < histogram.Top);

        var points = Enumerable.Range(0, 25).Select(i => new CalibrationPoint($"w{i}", 0.2 * random.NextDouble(), 0.4 * random.NextDouble(), 10)).ToList();
        var calibration = ConsolePlots.Calibration(points, 0.1).Axes.GetLimits();
        Assert.All(points, p => Assert.True(p.Predicted <= calibration.Right && p.Observed <= calibration.Top));
        Assert.True(calibration.Left <= 0 && calibration.Bottom <= 0);

        var curve = Enumerable.Range(1, 15).Select(s => new OwnerConsole.CurvePoint(s, 0.4 * Math.Exp(-0.2 * s), 30)).ToList();
        var learning = ConsolePlots.LearningCurve(curve, 0.45, 0.1).Axes.GetLimits();
        Assert.Equal((0.0, 15.0), (learning.Left, learning.Right));
        Assert.True(learning.Top >= 0.45 && learning.Top <= 0.5);
    }
}
