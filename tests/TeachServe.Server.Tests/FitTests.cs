using System.Net.Http.Json;

namespace TeachServe.Server.Tests;

public sealed class FitTests
{
    [Fact]
    public async Task Fit_over_http_covers_the_simulating_values_calibrates_and_applies_to_the_next_version()
    {
        using var app = new TestApp();
        var project = TestApp.ProjectJson(maxTeaching: 12, testItems: 8);
        project["policy"] = "random";
        project["learner"] = new System.Text.Json.Nodes.JsonObject { ["alpha"] = 1.0, ["lapse"] = 0.1 };
        var keys = await app.ReadyProjectAsync(project);
        var owner = app.Client(keys.OwnerKey);
        const double alpha = 1.0, lapse = 0.1;
        for (var i = 0; i < 24; i++)
            await SimulatedAnnotators.RunAsync(app, keys, $"fit-{i:00}", alpha, lapse, seed: (ulong)(500 + i));

        var fit = await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/fits", new { }), 201);
        var id = fit["fitId"]!.GetValue<string>();
        Assert.StartsWith("fit_", id, StringComparison.Ordinal);
        Assert.Equal(24, fit["fit"]!["sessionCount"]!.GetValue<int>());
        // The learners are seeded, but the server draws each session's seed (the random policy's order) itself, so
        // this run is not reproducible and a 95 % interval misses the truth in about one run in twenty: the coverage
        // check (≥ 90 % over a seeded grid) lives in Core (LearnerFitRecoveryTests). Here the test checks the wiring:
        // the estimates are inside the searched range, inside their own profile intervals, and plausible.
        // Repeated HTTP fits of this set-up spread around the simulating values (docs/research.md, Caveats).
        var estimate = fit["fit"]!["alpha"]!.GetValue<double>();
        var alphaInterval = fit["fit"]!["alphaProfile"]!["interval"]!;
        Assert.InRange(estimate, 0.01, 20);
        Assert.InRange(estimate, alphaInterval["low"]!.GetValue<double>(), alphaInterval["high"]?.GetValue<double>() ?? double.PositiveInfinity);
        var lapseEstimate = fit["fit"]!["lapse"]!.GetValue<double>();
        var lapseInterval = fit["fit"]!["lapseProfile"]!["interval"]!;
        Assert.InRange(lapseEstimate, lapseInterval["low"]!.GetValue<double>(), lapseInterval["high"]?.GetValue<double>() ?? 1.0);
        Assert.InRange(lapseEstimate, 0.0, 0.5);
        Assert.NotEmpty(fit["fit"]!["alphaProfile"]!["points"]!.AsArray());
        Assert.Equal(10, fit["calibration"]!["bins"]!.AsArray().Count);
        Assert.InRange(fit["calibration"]!["brierScore"]!.GetValue<double>(), 0, 1);

        var again = await Api.JsonAsync(await owner.GetAsync($"/api/v1/fits/{id}"), 200);
        Assert.Equal(fit["fit"]!["alpha"]!.GetValue<double>(), again["fit"]!["alpha"]!.GetValue<double>());
        var svg = await owner.GetStringAsync($"/api/v1/fits/{id}/calibration.svg");
        Assert.Contains("<svg", svg, StringComparison.Ordinal);

        var applied = await Api.JsonAsync(await owner.PostAsync($"/api/v1/fits/{id}/apply", null), 200);
        Assert.NotNull(applied["appliedAt"]);
        var settings = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}"), 200);
        Assert.Equal(fit["fit"]!["alpha"]!.GetValue<double>(), settings["settings"]!["learner"]!["alpha"]!.GetValue<double>());
        Assert.Equal(fit["fit"]!["lapse"]!.GetValue<double>(), settings["settings"]!["learner"]!["lapse"]!.GetValue<double>());

        var stranger = app.Client((await app.CreateProjectAsync()).OwnerKey);
        await Api.ProblemAsync(await stranger.GetAsync($"/api/v1/fits/{id}"), 404);
        await Api.ProblemAsync(await stranger.PostAsync($"/api/v1/fits/{id}/apply", null), 404);
    }

    [Fact]
    public async Task A_fit_without_finished_sessions_is_422()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        await Api.ProblemAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/fits", new { }), 422);
        await Api.ProblemAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/fits", new { modelVersion = 9 }), 404);
        await Api.ProblemAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/fits", new { confidence = 2 }), 422);
    }
}
