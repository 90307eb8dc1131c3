using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.Logging;
using Microsoft.Playwright;

[assembly: CollectionBehavior(DisableTestParallelization = true)]

namespace TeachServe.Browser.Tests;

/// <summary>One server (fresh database, demo loaded) and one browser per test class.</summary>
public class ServerFixture : IAsyncLifetime
{
    private IPlaywright? _playwright;

    public BrowserServer Server { get; private set; } = null!;
    public IBrowser Browser { get; private set; } = null!;
    public string ProjectId => Server.BannerLine("Demo project");
    public string OwnerKey => Server.BannerLine("Owner key");
    public string EmbedKey => Server.BannerLine("Embed key");

    protected virtual IReadOnlyList<string> FrameAncestors => [];

    public virtual async Task InitializeAsync()
    {
        Server = new BrowserServer(FrameAncestors);
        (_playwright, Browser) = await Tests.Browser.LaunchAsync();
    }

    public virtual async Task DisposeAsync()
    {
        await Browser.DisposeAsync();
        _playwright?.Dispose();
        await Server.DisposeAsync();
    }

    public HttpClient Api(string key)
    {
        var client = new HttpClient { BaseAddress = new Uri(Server.BaseUrl) };
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }

    /// <summary>Starts a session the way a platform does, with the embed key; returns its id and launch link.</summary>
    public async Task<(string SessionId, string LaunchUrl)> StartSessionAsync(string workerRef)
    {
        using var api = Api(EmbedKey);
        var response = await api.PostAsJsonAsync($"/api/v1/projects/{ProjectId}/sessions", new { workerRef });
        Assert.Equal(System.Net.HttpStatusCode.Created, response.StatusCode);
        var body = (await response.Content.ReadFromJsonAsync<JsonObject>())!;
        return (body["sessionId"]!.GetValue<string>(), body["launchUrl"]!.GetValue<string>());
    }

    /// <summary>The session's step and the number of answer events stored for it (equal unless an answer was stored twice).</summary>
    public async Task<(int Step, int AnswerEvents, string Phase)> AnswersAsync(string sessionId)
    {
        using var api = Api(OwnerKey);
        var session = (await api.GetFromJsonAsync<JsonObject>($"/api/v1/sessions/{sessionId}"))!;
        var events = await api.GetStringAsync($"/api/v1/projects/{ProjectId}/events");
        var answers = events.Split('\n', StringSplitOptions.RemoveEmptyEntries)
            .Select(l => JsonNode.Parse(l)!)
            .Count(e => e["type"]!.GetValue<string>() == "answer" && e["sessionId"]?.GetValue<string>() == sessionId);
        return (session["step"]!.GetValue<int>(), answers, session["phase"]!.GetValue<string>());
    }

    public async Task<IPage> NewPageAsync(int width = 1100, int height = 900, bool touch = false)
    {
        var context = await Browser.NewContextAsync(new BrowserNewContextOptions
        {
            ViewportSize = new ViewportSize { Width = width, Height = height }, HasTouch = touch, IsMobile = touch,
        });
        return await context.NewPageAsync();
    }
}

/// <summary>Adds a platform page on a second loopback origin that frames the annotator page.</summary>
public sealed class EmbedFixture : ServerFixture
{
    private readonly int _parentPort = BrowserServer.FreePort();
    private WebApplication? _parent;

    public string ParentOrigin => $"http://127.0.0.1:{_parentPort}";

    protected override IReadOnlyList<string> FrameAncestors => [ParentOrigin];

    public override async Task InitializeAsync()
    {
        var builder = WebApplication.CreateSlimBuilder();
        builder.WebHost.UseUrls(ParentOrigin);
        builder.Logging.ClearProviders();
        _parent = builder.Build();
        _parent.MapGet("/platform", (string src, string origin) => Results.Content($$"""
            <!doctype html>
            <html lang="en"><head><meta charset="utf-8"><title>A labelling platform</title></head>
            <body style="font-family: sans-serif; margin: 0; background: #dde3ea">
            <p style="margin: 0; padding: 0.6rem 1rem; background: #27303f; color: #fff">A labelling platform · onboarding</p>
            <iframe title="Onboarding" src="{{System.Net.WebUtility.HtmlEncode(src)}}" style="width: 100%; height: 820px; border: 0"></iframe>
            <script>
              window.received = [];
              window.addEventListener("message", (e) => {
                if (e.origin === {{System.Text.Json.JsonSerializer.Serialize(origin)}}) window.received.push(e.data);
              });
            </script>
            </body></html>
            """, "text/html"));
        await _parent.StartAsync();
        await base.InitializeAsync();
    }

    public override async Task DisposeAsync()
    {
        await base.DisposeAsync();
        if (_parent is not null) await _parent.DisposeAsync();
    }
}
