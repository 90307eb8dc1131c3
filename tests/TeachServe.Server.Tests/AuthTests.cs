using System.Net.Http.Json;

namespace TeachServe.Server.Tests;

public sealed class AuthTests
{
    [Fact]
    public async Task Missing_or_wrong_keys_get_401_problem_details()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        var missing = await app.Client().GetAsync($"/api/v1/projects/{keys.ProjectId}");
        await Api.ProblemAsync(missing, 401);
        Assert.Equal("Bearer", missing.Headers.WwwAuthenticate.Single().Scheme);
        await Api.ProblemAsync(await app.Client("tso.prj_nope.abc").GetAsync($"/api/v1/projects/{keys.ProjectId}"), 401);
        await Api.ProblemAsync(await app.Client(keys.OwnerKey + "x").GetAsync($"/api/v1/projects/{keys.ProjectId}"), 401);
        await Api.ProblemAsync(await app.Client("garbage").GetAsync($"/api/v1/projects/{keys.ProjectId}"), 401);
    }

    [Fact]
    public async Task A_key_of_another_project_gets_404_and_the_wrong_role_403()
    {
        using var app = new TestApp();
        var a = await app.CreateProjectAsync();
        var b = await app.CreateProjectAsync();
        await Api.ProblemAsync(await app.Client(a.OwnerKey).GetAsync($"/api/v1/projects/{b.ProjectId}"), 404);
        await Api.ProblemAsync(await app.Client(a.EmbedKey).GetAsync($"/api/v1/projects/{a.ProjectId}"), 403);
        await Api.ProblemAsync(await app.Client(a.OwnerKey).PostAsJsonAsync("/api/v1/projects", TestApp.ProjectJson()), 403);
        await Api.JsonAsync(await app.Client(a.OwnerKey).GetAsync($"/api/v1/projects/{a.ProjectId}"), 200);
        await Api.JsonAsync(await app.Client(TestApp.AdminKey).GetAsync($"/api/v1/projects/{a.ProjectId}"), 200);
    }

    [Fact]
    public async Task Starting_a_session_in_a_missing_project_is_404_for_every_key_that_may_start_one()
    {
        using var app = new TestApp();
        var a = await app.ReadyProjectAsync();
        var body = new { workerRef = "w1" };
        // A project's own keys name their project, so another id is a project they cannot see.
        await Api.ProblemAsync(await app.Client(a.EmbedKey).PostAsJsonAsync("/api/v1/projects/prj_missing/sessions", body), 404);
        await Api.ProblemAsync(await app.Client(a.OwnerKey).PostAsJsonAsync("/api/v1/projects/prj_missing/sessions", body), 404);
        // The admin key is of no project: the project itself is looked up.
        var admin = await Api.ProblemAsync(await app.Client(TestApp.AdminKey).PostAsJsonAsync("/api/v1/projects/prj_missing/sessions", body), 404);
        Assert.Equal("No such project.", admin["detail"]!.GetValue<string>());
        await Api.JsonAsync(await app.Client(TestApp.AdminKey).PostAsJsonAsync($"/api/v1/projects/{a.ProjectId}/sessions", body), 201);
    }

    [Fact]
    public async Task Session_tokens_expire_after_the_idle_time()
    {
        using var app = new TestApp(new() { ["TeachServe:SessionIdleTimeout"] = "00:30:00" });
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        app.Time.Advance(TimeSpan.FromMinutes(20));
        await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        app.Time.Advance(TimeSpan.FromMinutes(31));
        var expired = await Api.ProblemAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 401);
        Assert.Contains("expired", expired["detail"]!.GetValue<string>(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Another_sessions_id_with_my_token_is_404()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var one = await app.StartSessionAsync(keys, "w1");
        var two = await app.StartSessionAsync(keys, "w2");
        await Api.ProblemAsync(await one.Annotator.GetAsync($"/api/v1/sessions/{two.SessionId}/next"), 404);
    }

    [Fact]
    public async Task Rate_limit_answers_429_with_retry_after()
    {
        using var app = new TestApp(new() { ["TeachServe:RateLimit:PermitLimit"] = "5", ["TeachServe:RateLimit:Window"] = "00:01:00" });
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        for (var i = 0; i < 5; i++)
            await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}"), 200);
        var limited = await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}");
        await Api.ProblemAsync(limited, 429);
        Assert.True(limited.Headers.RetryAfter?.Delta is { TotalSeconds: > 0 } || limited.Headers.Contains("Retry-After"));
        // Limits are per key: another key still gets through.
        var other = await app.CreateProjectAsync();
        await Api.JsonAsync(await app.Client(other.OwnerKey).GetAsync($"/api/v1/projects/{other.ProjectId}"), 200);
    }
}
