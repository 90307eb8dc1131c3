using System.Net.Http.Json;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Options;
using TeachServe.Server.Persistence;
using TeachServe.Server.Simulations;

namespace TeachServe.Server.Tests;

public sealed class SimulationTests
{
    private static Dictionary<string, string?> BigJobs(int pendingPerProject = 4) => new()
    {
        ["TeachServe:Simulations:MaxLearners"] = "1000000",
        ["TeachServe:Simulations:MaxLearnerRuns"] = "1000000",
        ["TeachServe:Simulations:MaxPendingJobsPerProject"] = pendingPerProject.ToString(System.Globalization.CultureInfo.InvariantCulture),
        ["TeachServe:Simulations:MaxRunTime"] = "00:05:00",
    };

    /// <summary>Polls the job until <paramref name="until"/> holds; a bounded loop over a condition, not a fixed wait.</summary>
    private static async Task<JsonNode> WaitAsync(HttpClient owner, string id, Func<JsonNode, bool> until)
    {
        for (var i = 0; i < 1500; i++)
        {
            var job = await Api.JsonAsync(await owner.GetAsync($"/api/v1/simulations/{id}"), 200);
            if (until(job)) return job;
            await Task.Delay(20);
        }
        throw new TimeoutException($"Simulation {id} never reached the expected state.");
    }

    private static bool Ended(JsonNode job) => job["status"]!.GetValue<string>() is "succeeded" or "failed" or "canceled";

    [Fact]
    public async Task A_compare_run_reports_progress_and_ends_with_json_csv_and_plot()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var created = await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/simulations", new
        {
            policies = new[] { "random", "adaptive" }, variants = new[] { "assumed", "slow" }, learners = 40, seed = 7,
        }), 202);
        var id = created["simulationId"]!.GetValue<string>();
        Assert.StartsWith("sim_", id, StringComparison.Ordinal);
        var done = await WaitAsync(owner, id, Ended);
        Assert.Equal("succeeded", done["status"]!.GetValue<string>());
        Assert.Equal(100.0, done["percentDone"]!.GetValue<double>());
        var results = done["results"]!.AsArray();
        Assert.Equal(4, results.Count);
        Assert.Equal(["random", "adaptive", "random", "adaptive"], results.Select(r => r!["policy"]!.GetValue<string>()));
        Assert.Equal(["assumed", "assumed", "slow", "slow"], results.Select(r => r!["variant"]!.GetValue<string>()));
        Assert.All(results, r => Assert.Equal(40, r!["learners"]!.GetValue<int>()));

        // Seeded: the same request gives the same numbers.
        var again = await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/simulations", new
        {
            policies = new[] { "random", "adaptive" }, variants = new[] { "assumed", "slow" }, learners = 40, seed = 7,
        }), 202);
        var repeat = await WaitAsync(owner, again["simulationId"]!.GetValue<string>(), Ended);
        Assert.Equal(results.ToJsonString(), repeat["results"]!.ToJsonString());

        var csv = await owner.GetStringAsync($"/api/v1/simulations/{id}/results.csv");
        Assert.Equal(5, csv.Split("\r\n", StringSplitOptions.RemoveEmptyEntries).Length);
        Assert.Contains("<svg", await owner.GetStringAsync($"/api/v1/simulations/{id}/plots/learning-curves.svg"), StringComparison.Ordinal);
        await Api.ProblemAsync(await owner.PostAsync($"/api/v1/simulations/{id}/cancel", null), 409);
        await Api.ProblemAsync(await app.Client((await app.CreateProjectAsync()).OwnerKey).GetAsync($"/api/v1/simulations/{id}"), 404);
    }

    [Fact]
    public async Task Learner_kinds_unlike_the_model_run_from_the_items_features_and_need_them()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var created = await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/simulations", new
        {
            policies = new[] { "random" }, variants = new[] { "exemplar", "decision-lists" }, learners = 20, seed = 3,
        }), 202);
        var done = await WaitAsync(owner, created["simulationId"]!.GetValue<string>(), Ended);
        Assert.Equal("succeeded", done["status"]!.GetValue<string>());
        Assert.Equal(["exemplar", "decision-lists"], done["results"]!.AsArray().Select(r => r!["variant"]!.GetValue<string>()));

        // Unknown kinds are refused as before; a project whose items have no features or attributes cannot run them.
        await Api.ProblemAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/simulations", new { policies = new[] { "random" }, variants = new[] { "mind-reader" } }), 422);
        var bare = TestApp.ProjectJson();
        bare["family"] = new JsonObject { ["kind"] = "table", ["table"] = new JsonArray(new JsonObject { ["name"] = "as taught", ["predictions"] = new JsonObject() }) };
        var lines = string.Join("\n", Enumerable.Range(0, 20).Select(i => System.Text.Json.JsonSerializer.Serialize(new
        {
            id = $"b{i:00}", pool = i < 10 ? "teach" : "test", label = i % 2 == 0 ? "sound" : "defect", content = new { text = $"item {i}" },
        })));
        var plain = await app.ReadyProjectAsync(bare, lines);
        var refused = await Api.ProblemAsync(await app.Client(plain.OwnerKey).PostAsJsonAsync($"/api/v1/projects/{plain.ProjectId}/simulations", new
        {
            policies = new[] { "random" }, variants = new[] { "prototype" }, learners = 5,
        }), 422);
        Assert.Contains("features", refused["detail"]!.GetValue<string>(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_running_simulation_can_be_canceled_and_pending_jobs_are_bounded()
    {
        using var app = new TestApp(BigJobs(pendingPerProject: 1));
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var url = $"/api/v1/projects/{keys.ProjectId}/simulations";
        var id = (await Api.JsonAsync(await owner.PostAsJsonAsync(url, new { policies = new[] { "adaptive" }, learners = 1_000_000 }), 202))["simulationId"]!.GetValue<string>();
        await WaitAsync(owner, id, j => j["percentDone"]!.GetValue<double>() > 0);
        await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { policies = new[] { "random" }, learners = 5 }), 429);

        var canceled = await Api.JsonAsync(await owner.DeleteAsync($"/api/v1/simulations/{id}"), 200);
        Assert.NotEqual("succeeded", canceled["status"]!.GetValue<string>());
        var ended = await WaitAsync(owner, id, Ended);
        Assert.Equal("canceled", ended["status"]!.GetValue<string>());
        Assert.Contains("Canceled", ended["reason"]!.GetValue<string>(), StringComparison.Ordinal);
        Assert.InRange(ended["percentDone"]!.GetValue<double>(), 0, 99.9);
        await Api.ProblemAsync(await owner.GetAsync($"/api/v1/simulations/{id}/results.csv"), 409);
    }

    // Several nodes share one database; each node's queue lives in its memory. Rows written here stand for jobs
    // that other nodes hold.

    [Fact]
    public async Task A_job_of_a_live_node_is_left_alone_and_one_whose_node_stopped_is_failed()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var queue = app.Service<SimulationQueue>();
        var now = app.Time.GetUtcNow();
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            db.Set<SimulationJob>().AddRange(
                OtherNodesJob("sim_live", keys.ProjectId, SimulationStatuses.Running, "node_live", now),
                OtherNodesJob("sim_orphan", keys.ProjectId, SimulationStatuses.Queued, "node_gone", now - TimeSpan.FromMinutes(2)));
            await db.SaveChangesAsync();
        }

        await queue.SweepAsync(CancellationToken.None);
        Assert.Equal(SimulationStatuses.Running, (await JobAsync(app, "sim_live")).Status);
        var orphan = await JobAsync(app, "sim_orphan");
        Assert.Equal(SimulationStatuses.Failed, orphan.Status);
        Assert.Contains("node running it stopped", orphan.Reason, StringComparison.Ordinal);

        // The live node goes quiet too: after the stale limit its job ends the same way.
        app.Time.Advance(app.Service<IOptions<SimulationLimits>>().Value.StaleAfter + TimeSpan.FromSeconds(1));
        await queue.SweepAsync(CancellationToken.None);
        Assert.Equal(SimulationStatuses.Failed, (await JobAsync(app, "sim_live")).Status);
    }

    [Fact]
    public async Task A_cancel_made_through_another_node_stops_the_job_on_the_node_running_it()
    {
        // 5 policies × 2,000,000 learners: minutes of work, far beyond the bounded wait below, unless the cancel stops it.
        var settings = BigJobs(pendingPerProject: 1);
        settings["TeachServe:Simulations:MaxLearners"] = "2000000";
        settings["TeachServe:Simulations:MaxLearnerRuns"] = "10000000";
        using var app = new TestApp(settings);
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var queue = app.Service<SimulationQueue>();
        var id = (await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/simulations",
            new { policies = new[] { "adaptive", "random", "cover", "stochastic-greedy", "easy-first" }, learners = 2_000_000 }), 202))["simulationId"]!.GetValue<string>();
        await WaitAsync(owner, id, j => j["percentDone"]!.GetValue<double>() > 0);
        Assert.Equal(queue.NodeId, (await JobAsync(app, id)).NodeId);

        // What the cancel endpoint does on a node that does not hold the job.
        using (var scope = app.Services.CreateScope())
        {
            await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Set<SimulationJob>().Where(j => j.Id == id)
                .ExecuteUpdateAsync(u => u.SetProperty(j => j.Status, SimulationStatuses.Canceled).SetProperty(j => j.Reason, "Canceled by the owner."));
        }
        await queue.SweepAsync(CancellationToken.None);

        // Bounded poll (at most 30 s): the job would run for minutes if the cancel did not reach it.
        for (var i = 0; i < 1500 && queue.Progress(id) is not null; i++) await Task.Delay(20);
        Assert.Null(queue.Progress(id));
        var job = await JobAsync(app, id);
        Assert.Equal(SimulationStatuses.Canceled, job.Status);
        Assert.Equal("Canceled by the owner.", job.Reason);
        Assert.Null(job.ResultJson);
    }

    private static SimulationJob OtherNodesJob(string id, string projectId, string status, string node, DateTimeOffset heartbeat) => new()
    {
        Id = id, ProjectId = projectId, ModelVersion = 1, RequestJson = "{}", Status = status,
        CreatedAt = heartbeat, NodeId = node, HeartbeatAt = heartbeat,
    };

    private static async Task<SimulationJob> JobAsync(TestApp app, string id)
    {
        using var scope = app.Services.CreateScope();
        return await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Set<SimulationJob>().AsNoTracking().SingleAsync(j => j.Id == id);
    }

    [Fact]
    public async Task A_simulation_past_the_run_time_limit_fails_with_a_reason()
    {
        using var app = new TestApp(BigJobs());
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var id = (await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/simulations",
            new { policies = new[] { "adaptive" }, learners = 1_000_000 }), 202))["simulationId"]!.GetValue<string>();
        // Progress is reported only after the deadline is armed on the (fake) clock.
        await WaitAsync(owner, id, j => j["percentDone"]!.GetValue<double>() > 0);
        app.Time.Advance(TimeSpan.FromMinutes(6));
        var ended = await WaitAsync(owner, id, Ended);
        Assert.Equal("failed", ended["status"]!.GetValue<string>());
        Assert.Contains("run-time limit", ended["reason"]!.GetValue<string>(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Requests_beyond_the_limits_are_422()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var url = $"/api/v1/projects/{keys.ProjectId}/simulations";
        var tooBig = await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new
        {
            policies = new[] { "random", "cover", "adaptive", "easy-first", "stochastic-greedy" },
            variants = new[] { "assumed", "slow", "fast", "stuck", "forgetful" }, learners = 2000,
        }), 422);
        Assert.Contains("exceeds the limit", tooBig["detail"]!.GetValue<string>(), StringComparison.Ordinal);
        await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { policies = new[] { "psychic" } }), 422);
        await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { policies = new[] { "random" }, variants = new[] { "telepathic" } }), 422);
        await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { policies = new[] { "random" }, learners = 0 }), 422);
        await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { policies = new[] { "random" }, modelVersion = 5 }), 404);
    }
}
