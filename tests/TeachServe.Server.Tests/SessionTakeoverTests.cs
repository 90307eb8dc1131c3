using System.Net.Http.Json;

namespace TeachServe.Server.Tests;

/// <summary>Starting again for a worker with a running session does not take the session away from its annotator unless asked to.</summary>
public sealed class SessionTakeoverTests
{
    [Fact]
    public async Task A_second_start_returns_the_session_without_a_token_and_the_annotators_token_keeps_working()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys, "w-1");
        var embed = app.Client(keys.EmbedKey);

        var again = await Api.JsonAsync(await embed.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w-1" }), 200);
        Assert.Equal(s.SessionId, again["sessionId"]!.GetValue<string>());
        Assert.Null(again["token"]);
        Assert.Null(again["launchUrl"]);
        Assert.Equal("teaching", again["phase"]!.GetValue<string>());
        var explicitNo = await Api.JsonAsync(await embed.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w-1", resume = false }), 200);
        Assert.Null(explicitNo["token"]);

        await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        var events = await app.Client(keys.OwnerKey).GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events");
        Assert.DoesNotContain("session.resumed", events, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Resume_true_retires_the_old_token_issues_a_new_one_and_is_recorded()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys, "w-1");
        await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);

        var resumed = await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync(
            $"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w-1", resume = true }), 200);
        Assert.Equal(s.SessionId, resumed["sessionId"]!.GetValue<string>());
        var token = resumed["token"]!.GetValue<string>();
        Assert.NotEqual(s.Token, token);
        Assert.Contains("/annotate/", resumed["launchUrl"]!.GetValue<string>(), StringComparison.Ordinal);

        await Api.ProblemAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 401);
        await Api.JsonAsync(await app.Client(token).GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);

        var events = (await app.Client(keys.OwnerKey).GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events"))
            .Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => System.Text.Json.Nodes.JsonNode.Parse(l)!).ToList();
        var takeover = Assert.Single(events, e => e["type"]!.GetValue<string>() == "session.resumed");
        Assert.Equal(s.SessionId, takeover["sessionId"]!.GetValue<string>());
        Assert.Equal("w-1", takeover["workerRef"]!.GetValue<string>());
    }

    [Fact]
    public async Task Resume_for_a_worker_without_a_running_session_starts_one()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var started = await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync(
            $"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "new", resume = true }), 201);
        Assert.NotNull(started["token"]);
    }
}
