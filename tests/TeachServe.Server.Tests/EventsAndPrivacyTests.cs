using System.Text.Json.Nodes;

namespace TeachServe.Server.Tests;

public sealed class EventsAndPrivacyTests
{
    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    [Fact]
    public async Task Event_log_streams_as_json_lines_and_resumes_after_an_id()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var (_, responses) = await TestApp.RunAsync(s, Honest);
        var owner = app.Client(keys.OwnerKey);
        var response = await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/events");
        Assert.Equal("application/x-ndjson", response.Content.Headers.ContentType?.MediaType);
        var lines = (await response.Content.ReadAsStringAsync()).Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => JsonNode.Parse(l)!).ToList();
        Assert.Equal("session.started", lines[0]["type"]!.GetValue<string>());
        Assert.Equal(responses.Count, lines.Count(l => l["type"]!.GetValue<string>() == "answer"));
        Assert.Equal("session.released", lines[^1]["type"]!.GetValue<string>());
        var ids = lines.Select(l => l["id"]!.GetValue<long>()).ToList();
        Assert.Equal(ids.Order(), ids);

        var rest = await owner.GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events?after={ids[^2]}");
        Assert.Single(rest.Split('\n', StringSplitOptions.RemoveEmptyEntries));
        await Api.ProblemAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/events"), 403);
    }

    [Fact]
    public async Task Erasing_a_worker_removes_sessions_events_and_releases_and_is_audited()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var gone = await app.StartSessionAsync(keys, "erase-me");
        await TestApp.RunAsync(gone, Honest);
        var kept = await app.StartSessionAsync(keys, "keep-me");
        var owner = app.Client(keys.OwnerKey);

        var erased = await Api.JsonAsync(await owner.DeleteAsync($"/api/v1/projects/{keys.ProjectId}/workers/erase-me"), 200);
        Assert.Equal(1, erased["sessions"]!.GetValue<int>());
        Assert.Equal(1, erased["releases"]!.GetValue<int>());
        Assert.True(erased["events"]!.GetValue<int>() > 2);

        await Api.ProblemAsync(await owner.GetAsync($"/api/v1/sessions/{gone.SessionId}"), 404);
        await Api.ProblemAsync(await gone.Annotator.GetAsync($"/api/v1/sessions/{gone.SessionId}/next"), 401);
        var log = await owner.GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events");
        Assert.DoesNotContain("erase-me", log, StringComparison.Ordinal);
        Assert.Contains("worker.erased", log, StringComparison.Ordinal);
        Assert.Contains("keep-me", log, StringComparison.Ordinal);
        var feed = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/releases"), 200);
        Assert.Empty(feed["releases"]!.AsArray());
        var audit = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/audit"), 200);
        var entry = audit["entries"]!.AsArray().Single()!;
        Assert.Equal("worker.erased", entry["action"]!.GetValue<string>());
        Assert.Equal(erased["subjectHash"]!.GetValue<string>(), entry["subjectHash"]!.GetValue<string>());
        await Api.JsonAsync(await kept.Annotator.GetAsync($"/api/v1/sessions/{kept.SessionId}/next"), 200);
    }
}
