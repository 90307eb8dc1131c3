using System.Net.Http.Json;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Experiments;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Tests;

/// <summary>Finite, sensible experiment settings at creation, and reports that never answer 500 for experiments stored earlier.</summary>
public sealed class ExperimentRulesTests
{
    private static object Body(double mde, double[]? weights = null) => new
    {
        name = "ranges",
        arms = new object[] { new { name = "control", policy = "random" }, new { name = "adaptive", policy = "adaptive" } },
        weights,
        primaryMetric = "test-error",
        minimumDetectableEffect = mde,
    };

    [Theory]
    [InlineData(1e-300, null, "minimumDetectableEffect")]
    [InlineData(0.0005, null, "minimumDetectableEffect")]
    [InlineData(0.1, new[] { 1e308, 1e308 }, "weights[0]")]
    [InlineData(0.1, new[] { 1.0, 2e6 }, "weights[1]")]
    public async Task Out_of_range_settings_are_422_naming_the_field(double mde, double[]? weights, string field)
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var response = await app.Client(keys.OwnerKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/experiments", Body(mde, weights));
        var problem = await Api.ProblemAsync(response, 422);
        Assert.Contains(problem["errors"]!.AsArray(), e => e!["field"]!.GetValue<string>() == field);
    }

    [Theory]
    [InlineData("{\"minimumDetectableEffect\":1e-300}", "minimumDetectableEffect")]
    [InlineData("{\"weights\":[1e308,1e308]}", "weights[0]")]
    public async Task An_experiment_stored_before_the_rules_gets_422_from_report_and_plots_and_its_csv_still_works(string patch, string field)
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var created = await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/experiments", Body(0.1)), 201);
        var id = created["experimentId"]!.GetValue<string>();
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/experiments/{id}/start", null), 200);
        await app.StartSessionAsync(keys, "w-1");

        // What an older server accepted, written as it would have stored it.
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            var row = await db.Set<Experiment>().SingleAsync(e => e.Id == id);
            var definition = JsonNode.Parse(row.DefinitionJson)!.AsObject();
            foreach (var (key, value) in JsonNode.Parse(patch)!.AsObject().ToList()) definition[key] = value?.DeepClone();
            row.DefinitionJson = definition.ToJsonString();
            await db.SaveChangesAsync();
        }

        foreach (var path in new[] { "report", "plots/test-error.svg", "plots/learning-curves.png" })
        {
            var problem = await Api.ProblemAsync(await owner.GetAsync($"/api/v1/experiments/{id}/{path}"), 422);
            Assert.Contains(problem["errors"]!.AsArray(), e => e!["field"]!.GetValue<string>() == field);
        }
        var csv = await owner.GetAsync($"/api/v1/experiments/{id}/report.csv");
        Assert.Equal(200, (int)csv.StatusCode);
        Assert.Contains(",w-1,", await csv.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        await Api.JsonAsync(await owner.GetAsync($"/api/v1/experiments/{id}"), 200);
    }
}
