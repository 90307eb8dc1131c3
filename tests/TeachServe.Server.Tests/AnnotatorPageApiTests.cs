using System.Net;
using System.Net.Http.Json;
using System.Text.Json.Nodes;

namespace TeachServe.Server.Tests;

public sealed class AnnotatorPageApiTests
{
    private static async Task<(TestApp.Keys Keys, JsonNode Started)> StartAsync(TestApp app, string worker = "w1")
    {
        var keys = await app.ReadyProjectAsync();
        var response = await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = worker });
        return (keys, await Api.JsonAsync(response, 201));
    }

    private static string Code(JsonNode started)
    {
        var url = started["launchUrl"]!.GetValue<string>();
        return url[(url.IndexOf("#code=", StringComparison.Ordinal) + "#code=".Length)..];
    }

    [Fact]
    public async Task The_launch_link_holds_a_one_time_code_not_the_token_and_the_code_trades_once_for_the_same_token()
    {
        using var app = new TestApp();
        var (_, started) = await StartAsync(app);
        var url = started["launchUrl"]!.GetValue<string>();
        var token = started["token"]!.GetValue<string>();
        var sessionId = started["sessionId"]!.GetValue<string>();
        Assert.DoesNotContain(token, url, StringComparison.Ordinal);
        Assert.DoesNotContain("tst.", url, StringComparison.Ordinal);
        Assert.StartsWith($"http://localhost/annotate/{sessionId}#code=tsl_", url, StringComparison.Ordinal);

        var client = app.Client();
        var exchanged = await Api.JsonAsync(await client.PostAsJsonAsync("/api/v1/launch", new { code = Code(started) }), 200);
        Assert.Equal(sessionId, exchanged["sessionId"]!.GetValue<string>());
        Assert.Equal(token, exchanged["token"]!.GetValue<string>());
        await Api.ProblemAsync(await client.PostAsJsonAsync("/api/v1/launch", new { code = Code(started) }), 410);
        await Api.ProblemAsync(await client.PostAsJsonAsync("/api/v1/launch", new { code = "tsl_" + new string('A', 43) }), 410);
        await Api.ProblemAsync(await client.PostAsJsonAsync("/api/v1/launch", new { code = "x" }), 410);
    }

    [Fact]
    public async Task A_launch_code_expires_and_a_resumed_session_gets_a_new_code_for_its_new_token()
    {
        using var app = new TestApp(new() { ["TeachServe:Annotate:LaunchCodeLifetime"] = "00:10:00" });
        var (keys, first) = await StartAsync(app);
        app.Time.Advance(TimeSpan.FromMinutes(11));
        await Api.ProblemAsync(await app.Client().PostAsJsonAsync("/api/v1/launch", new { code = Code(first) }), 410);

        var again = await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w1", resume = true }), 200);
        var exchanged = await Api.JsonAsync(await app.Client().PostAsJsonAsync("/api/v1/launch", new { code = Code(again) }), 200);
        Assert.Equal(again["token"]!.GetValue<string>(), exchanged["token"]!.GetValue<string>());
        var page = await Api.JsonAsync(await app.Client(exchanged["token"]!.GetValue<string>()).GetAsync($"/api/v1/sessions/{again["sessionId"]}/page"), 200);
        Assert.Equal("teaching", page["phase"]!.GetValue<string>());
    }

    [Fact]
    public async Task The_page_state_has_progress_figures_and_the_item_but_no_truth()
    {
        using var app = new TestApp();
        var (_, started) = await StartAsync(app);
        var annotator = app.Client(started["token"]!.GetValue<string>());
        var page = await Api.JsonAsync(await annotator.GetAsync($"/api/v1/sessions/{started["sessionId"]}/page"), 200);
        Assert.Equal(0.1, page["targetError"]!.GetValue<double>());
        Assert.Equal(10, page["maxTeachingItems"]!.GetValue<int>());
        Assert.True(page["startingError"]!.GetValue<double>() > 0.1);
        Assert.StartsWith("x=", page["item"]!["text"]!.GetValue<string>(), StringComparison.Ordinal);
        var text = page.ToJsonString();
        Assert.DoesNotContain("\"label\"", text, StringComparison.Ordinal);
        Assert.DoesNotContain("explanation", text, StringComparison.Ordinal);
        Assert.Empty(page["parentOrigins"]!.AsArray());
        // Another session's token cannot read it.
        var other = await app.Client(await StartOtherAsync(app)).GetAsync($"/api/v1/sessions/{started["sessionId"]}/page");
        Assert.Equal(HttpStatusCode.NotFound, other.StatusCode);
    }

    private static async Task<string> StartOtherAsync(TestApp app)
    {
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(TestApp.ItemsJsonl())), 200);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        var s = await app.StartSessionAsync(keys, "other");
        return s.Token;
    }

    [Fact]
    public async Task The_page_is_served_with_no_referrer_a_strict_policy_and_the_configured_frame_ancestors()
    {
        using var app = new TestApp(new()
        {
            ["TeachServe:Annotate:FrameAncestors:0"] = "https://labels.example.org",
            ["TeachServe:Annotate:FrameAncestors:1"] = "http://127.0.0.1:7001",
        });
        var (_, started) = await StartAsync(app);
        var response = await app.Client().GetAsync($"/annotate/{started["sessionId"]}");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal("no-referrer", response.Headers.GetValues("Referrer-Policy").Single());
        var csp = response.Headers.GetValues("Content-Security-Policy").Single();
        Assert.Contains("frame-ancestors 'self' https://labels.example.org http://127.0.0.1:7001", csp, StringComparison.Ordinal);
        Assert.Contains("script-src 'self'", csp, StringComparison.Ordinal);
        Assert.DoesNotContain("unsafe-inline", csp, StringComparison.Ordinal);
        var html = await response.Content.ReadAsStringAsync();
        Assert.Contains("<meta name=\"referrer\" content=\"no-referrer\">", html, StringComparison.Ordinal);
        var script = System.Text.RegularExpressions.Regex.Match(html, "src=\"(/assets/annotate\\.js\\?v=[0-9a-f]+)\"").Groups[1].Value;
        var js = await app.Client().GetAsync(script);
        Assert.Equal("text/javascript", js.Content.Headers.ContentType?.MediaType);
        Assert.Contains("immutable", js.Headers.CacheControl?.ToString(), StringComparison.Ordinal);

        var console = await app.Client().GetAsync("/console");
        Assert.Contains("frame-ancestors 'none'", console.Headers.GetValues("Content-Security-Policy").Single(), StringComparison.Ordinal);
        Assert.Equal("no-referrer", console.Headers.GetValues("Referrer-Policy").Single());
    }

    [Fact]
    public async Task Frame_ancestors_must_be_plain_origins()
    {
        // The real process (see StartupTests): the in-process host can hide a failed start behind its own disposal race.
        var (exitCode, output) = await ServerProcess.StartExpectingExitAsync(new Dictionary<string, string>
        {
            ["TeachServe:DataDirectory"] = TestApp.NewDataDirectory(),
            ["TeachServe:AdminKey"] = TestApp.AdminKey,
            ["TeachServe:Annotate:FrameAncestors:0"] = "https://labels.example.org/path",
        });
        Assert.NotEqual(0, exitCode);
        Assert.Contains("FrameAncestors", output, StringComparison.Ordinal);
    }
}
