using System.Net.Http.Json;
using System.Security.Claims;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Auth;
using TeachServe.Server.Experiments;
using TeachServe.Server.Fits;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Releases;
using TeachServe.Server.Simulations;
using TeachServe.Server.Workers;

namespace TeachServe.Server.Tests;

/// <summary>
/// The feature operations called directly, as the console or a job would: they answer the same problems the endpoints
/// answer (status, title, detail, extensions), returned rather than thrown.
/// </summary>
public sealed class OperationsTests
{
    private static ClaimsPrincipal Owner(string projectId) => new(new ClaimsIdentity(
        [new Claim(KeyClaims.Role, nameof(KeyRole.Owner)), new Claim(KeyClaims.Project, projectId), new Claim(KeyClaims.KeyId, "test")], "test"));

    private static async Task<T> WithScopeAsync<TOperations, T>(TestApp app, Func<TOperations, Task<T>> call) where TOperations : notnull
    {
        using var scope = app.Services.CreateScope();
        return await call(scope.ServiceProvider.GetRequiredService<TOperations>());
    }

    private static void SameProblem(JsonNode http, ProblemHttpResult? direct, params string[] extensions)
    {
        Assert.NotNull(direct);
        var p = direct.ProblemDetails;
        Assert.Equal(http["status"]!.GetValue<int>(), p.Status);
        Assert.Equal(http["title"]!.GetValue<string>(), p.Title);
        Assert.Equal(http["detail"]!.GetValue<string>(), p.Detail);
        foreach (var name in extensions)
            Assert.Equal(http[name]!.ToJsonString(), JsonSerializer.Serialize(p.Extensions[name], Json.Options));
    }

    [Fact]
    public async Task Experiment_operations_answer_the_problems_of_their_endpoints()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var user = Owner(keys.ProjectId);

        // No such experiment: 404.
        var http = await Api.ProblemAsync(await owner.GetAsync("/api/v1/experiments/exp_0000000000000000"), 404);
        var direct = await WithScopeAsync<ExperimentOperations, Outcome<ExperimentView>>(app, o => o.GetAsync("exp_0000000000000000", user, CancellationToken.None));
        Assert.False(direct.Succeeded);
        SameProblem(http, direct.Problem);

        // An invalid definition: 422 with the same list of fields.
        var invalid = new CreateExperimentRequest { Name = "one arm", Arms = [new Core.Experiments.ArmDefinition { Name = "only", Policy = "random" }] };
        http = await Api.ProblemAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/experiments", invalid, Json.Options), 422);
        var created = await WithScopeAsync<ExperimentOperations, Outcome<ExperimentView>>(app, o => o.CreateAsync(keys.ProjectId, invalid, CancellationToken.None));
        SameProblem(http, created.Problem, "errors");

        // Stopping a draft: 409; the draft itself is made by the operation and read back over HTTP unchanged.
        var two = invalid with { Name = "two arms", Arms = [.. invalid.Arms, new Core.Experiments.ArmDefinition { Name = "greedy", Policy = "stochastic-greedy" }] };
        var draft = await WithScopeAsync<ExperimentOperations, Outcome<ExperimentView>>(app, o => o.CreateAsync(keys.ProjectId, two, CancellationToken.None));
        Assert.True(draft.Succeeded);
        var read = await Api.JsonAsync(await owner.GetAsync($"/api/v1/experiments/{draft.Value!.ExperimentId}"), 200);
        Assert.Equal(JsonSerializer.Serialize(draft.Value, Json.Options), read.ToJsonString(Json.Options));
        http = await Api.ProblemAsync(await owner.PostAsync($"/api/v1/experiments/{draft.Value.ExperimentId}/stop", null), 409);
        var stopped = await WithScopeAsync<ExperimentOperations, Outcome<ExperimentView>>(app, o => o.StopAsync(draft.Value.ExperimentId, user, CancellationToken.None));
        SameProblem(http, stopped.Problem);

        // Another project's key sees the experiment as missing, as the endpoint does.
        var other = Owner("prj_someoneelse");
        var foreign = await WithScopeAsync<ExperimentOperations, Outcome<ExperimentView>>(app, o => o.GetAsync(draft.Value.ExperimentId, other, CancellationToken.None));
        Assert.Equal(404, foreign.Problem!.StatusCode);
    }

    [Fact]
    public async Task Paging_fit_and_simulation_operations_answer_the_problems_of_their_endpoints()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var user = Owner(keys.ProjectId);

        // A cursor the feed never handed out, and a limit out of range: 400, before any database work.
        var http = await Api.ProblemAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/releases?after=not*a*cursor"), 400);
        var releases = await WithScopeAsync<ReleaseOperations, Outcome<ReleasePage>>(app, o => o.ListAsync(keys.ProjectId, "not*a*cursor", null, CancellationToken.None));
        SameProblem(http, releases.Problem);
        http = await Api.ProblemAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/audit?limit=0"), 400);
        var audit = await WithScopeAsync<WorkerOperations, Outcome<AuditPage>>(app, o => o.ListAuditAsync(keys.ProjectId, null, 0, CancellationToken.None));
        SameProblem(http, audit.Problem);

        // No ready model version yet: 404 from both research operations.
        http = await Api.ProblemAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/fits", new { }), 404);
        var fit = await WithScopeAsync<FitOperations, Outcome<FitDocument>>(app, o => o.CreateAsync(keys.ProjectId, new CreateFitRequest(), CancellationToken.None));
        SameProblem(http, fit.Problem);
        var body = new CreateSimulationRequest { Policies = ["random"], Learners = 10 };
        http = await Api.ProblemAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/simulations", body, Json.Options), 404);
        var simulation = await WithScopeAsync<SimulationOperations, Outcome<SimulationView>>(app, o => o.CreateAsync(keys.ProjectId, body, CancellationToken.None));
        SameProblem(http, simulation.Problem);

        // A page that works is the same page either way.
        var page = await WithScopeAsync<ReleaseOperations, Outcome<ReleasePage>>(app, o => o.ListAsync(keys.ProjectId, null, 5, CancellationToken.None));
        var served = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/releases?limit=5"), 200);
        Assert.Equal(served.ToJsonString(Json.Options), JsonSerializer.Serialize(page.Value, Json.Options));
    }

    [Fact]
    public void Cursor_reading_returns_its_problems()
    {
        var encoded = Cursor.Encode("41");
        Assert.Equal(41L, Cursor.ReadNumber(encoded, "after").Value);
        Assert.Equal(0L, Cursor.ReadNumber(null, "after").Value);
        Assert.Equal(Cursor.DefaultLimit, Cursor.PageSize(null).Value);

        foreach (var bad in new[] { "not*a*cursor", Cursor.Encode("-3"), Cursor.Encode("x"), new string('a', 201) })
        {
            var read = Cursor.ReadNumber(bad, "after");
            Assert.False(read.Succeeded);
            Assert.Equal(400, read.Problem!.StatusCode);
            Assert.Equal("'after' is not a cursor returned by this API.", read.Problem.ProblemDetails.Detail);
        }
        var size = Cursor.PageSize(Cursor.MaxLimit + 1);
        Assert.Equal(400, size.Problem!.StatusCode);
        Assert.Equal($"'limit' must be between 1 and {Cursor.MaxLimit}.", size.Problem.ProblemDetails.Detail);
    }

    [Fact]
    public void One_json_dialect_with_a_research_results_rule_for_undefined_numbers()
    {
        double[] numbers = [0.1, 1e-300, 123456789.125, -0.0, 2.5e17];
        // Finite numbers are written exactly as the framework's web defaults write them, in both presets.
        var web = JsonSerializer.Serialize(numbers, JsonSerializerOptions.Web);
        Assert.Equal(web, JsonSerializer.Serialize(numbers, Json.Options));
        Assert.Equal(web, JsonSerializer.Serialize(numbers, Json.Results));
        Assert.Equal("\"biased-prior\"", JsonSerializer.Serialize(Core.Simulation.LearnerVariant.BiasedPrior, Json.Options));
        Assert.Equal("\"biased-prior\"", JsonSerializer.Serialize(Core.Simulation.LearnerVariant.BiasedPrior, Json.Results));

        // Research results say "not enough data" with NaN: null on the wire, NaN again when read back.
        Assert.Equal("[null,null,null]", JsonSerializer.Serialize(new[] { double.NaN, double.PositiveInfinity, double.NegativeInfinity }, Json.Results));
        var stored = JsonSerializer.Deserialize<double[]>("[1.5,null]", Json.StoredResults)!;
        Assert.Equal(1.5, stored[0]);
        Assert.True(double.IsNaN(stored[1]));
        // Elsewhere a null or quoted number is the client's mistake, and so is an unknown member, except in stored results.
        Assert.Throws<JsonException>(() => JsonSerializer.Deserialize<double[]>("[1.5,null]", Json.Options));
        Assert.Throws<JsonException>(() => JsonSerializer.Deserialize<double[]>("[\"1.5\"]", Json.Options));
        Assert.Throws<JsonException>(() => JsonSerializer.Deserialize<CreateFitRequest>("""{"confidence":0.9,"typo":1}""", Json.Options));
        Assert.Throws<JsonException>(() => JsonSerializer.Deserialize<CreateFitRequest>("""{"confidence":0.9,"typo":1}""", Json.Results));
        Assert.Equal(0.9, JsonSerializer.Deserialize<CreateFitRequest>("""{"confidence":0.9,"typo":1}""", Json.StoredResults)!.Confidence);
    }

    [Fact]
    public void The_http_pipeline_and_the_static_dialect_are_configured_alike()
    {
        using var app = new TestApp();
        var http = app.Services.GetRequiredService<Microsoft.Extensions.Options.IOptions<Microsoft.AspNetCore.Http.Json.JsonOptions>>().Value.SerializerOptions;
        var sample = new CreateSimulationRequest { Policies = ["random", "adaptive"], Learners = 12, Variants = ["biased-prior"] };
        Assert.Equal(JsonSerializer.Serialize(sample, Json.Options), JsonSerializer.Serialize(sample, http));
        Assert.Equal(Json.Options.UnmappedMemberHandling, http.UnmappedMemberHandling);
        Assert.Equal(Json.Options.NumberHandling, http.NumberHandling);
        Assert.Equal(Json.Options.Converters.Select(c => c.GetType()), http.Converters.Select(c => c.GetType()));
    }
}
