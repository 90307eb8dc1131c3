using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.AspNetCore.TestHost;
using Microsoft.Data.Sqlite;
using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Tests;

/// <summary>One fresh server with its own database (SQLite file, or PostgreSQL database: see <see cref="TestDatabase"/>) and a fake clock per test.</summary>
public sealed class TestApp : WebApplicationFactory<Program>
{
    public const string AdminKey = "tsa.test-admin-key-0123456789abcdef";
    private readonly bool _ownsDirectory;
    private readonly Action<IServiceCollection>? _services;

    /// <summary>Request header naming the connection's peer address (the test server has none of its own).</summary>
    public const string PeerHeader = "X-Test-Peer";

    public TestApp(Dictionary<string, string?>? settings = null, string? dataDirectory = null, FakeTimeProvider? time = null,
        Action<IServiceCollection>? services = null)
    {
        _services = services;
        _ownsDirectory = dataDirectory is null;
        DataDirectory = dataDirectory ?? NewDataDirectory();
        Settings = settings ?? [];
        Time = time ?? new FakeTimeProvider(new DateTimeOffset(2026, 1, 5, 9, 0, 0, TimeSpan.Zero));
        Banner = new StringWriter();
        if (TestDatabase.IsPostgres)
        {
            // Nothing else creates the folder on PostgreSQL, and the restart tests delete it at the end.
            Directory.CreateDirectory(DataDirectory);
            PostgresDatabase = TestDatabase.NameFor(DataDirectory);
            PostgresConnectionString = TestDatabase.Create(PostgresDatabase);
        }
    }

    /// <summary>This app's PostgreSQL database when the suite runs on PostgreSQL.</summary>
    public string? PostgresDatabase { get; }
    public string? PostgresConnectionString { get; }

    public string DataDirectory { get; }
    public Dictionary<string, string?> Settings { get; }
    public FakeTimeProvider Time { get; }
    public StringWriter Banner { get; }

    public static string NewDataDirectory() => Path.Combine(Path.GetTempPath(), "teachserve-tests", Guid.NewGuid().ToString("N"));

    protected override void ConfigureWebHost(IWebHostBuilder builder)
    {
        builder.UseEnvironment("Testing");
        var config = new Dictionary<string, string?>
        {
            ["TeachServe:DataDirectory"] = DataDirectory,
            ["TeachServe:AdminKey"] = AdminKey,
            ["TeachServe:LoadDemo"] = "false",
            ["TeachServe:PrintStartupBanner"] = "true",
            ["Logging:LogLevel:Default"] = "Warning",
            // Webhook receivers in tests listen on loopback; WebhookTests checks the refusal with this off.
            ["TeachServe:Webhooks:AllowPrivateNetworks"] = "true",
        };
        if (PostgresConnectionString is not null)
        {
            config["TeachServe:Database:Provider"] = "postgres";
            config["TeachServe:Database:ConnectionString"] = PostgresConnectionString;
        }
        foreach (var (key, value) in Settings) config[key] = value;
        builder.ConfigureAppConfiguration(c => c.AddInMemoryCollection(config));
        builder.ConfigureTestServices(s =>
        {
            s.AddSingleton<TimeProvider>(Time);
            s.AddSingleton(new StartupBanner(Banner));
            s.AddSingleton<IStartupFilter, TestPeerFilter>();
            _services?.Invoke(s);
        });
    }

    public HttpClient Client(string? key = null)
    {
        var client = CreateClient();
        if (key is not null) client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }

    public T Service<T>() where T : notnull => Services.GetRequiredService<T>();

    protected override void Dispose(bool disposing)
    {
        base.Dispose(disposing);
        if (disposing && _ownsDirectory)
        {
            SqliteConnection.ClearAllPools();
            if (PostgresDatabase is not null) TestDatabase.Drop(PostgresDatabase);
            try { Directory.Delete(DataDirectory, recursive: true); } catch (IOException) { }
        }
    }

    // ---- a small project whose truth an honest test annotator can read off the content ----

    /// <summary>Items "x=N": sound when N &lt; 10, defect otherwise; teach N = 0..19, test N = 0.5..19.5.</summary>
    public static string ItemsJsonl(int teach = 20, int test = 20)
    {
        var lines = new StringBuilder();
        for (var i = 0; i < teach; i++)
            lines.Append(Item($"t{i:00}", "teach", i * 20.0 / teach)).Append('\n');
        for (var i = 0; i < test; i++)
            lines.Append(Item($"h{i:00}", "test", i * 20.0 / test + 0.5)).Append('\n');
        return lines.ToString();
    }

    public static string Item(string id, string pool, double x) => JsonSerializer.Serialize(new
    {
        id, pool, label = TruthOf(x), features = new Dictionary<string, double> { ["x"] = x },
        content = new { text = $"x={x.ToString(System.Globalization.CultureInfo.InvariantCulture)}" },
        explanation = $"{(x < 10 ? "below" : "at or above")} 10",
    });

    public static string TruthOf(double x) => x < 10 ? "sound" : "defect";

    public static string TruthOf(JsonNode item) =>
        TruthOf(double.Parse(item["content"]!["text"]!.GetValue<string>()[2..], System.Globalization.CultureInfo.InvariantCulture));

    public static JsonObject ProjectJson(int maxTeaching = 10, int testItems = 8, int retakes = 0) => new()
    {
        ["name"] = "Seam check",
        ["labels"] = new JsonArray("sound", "defect"),
        ["family"] = new JsonObject { ["kind"] = "stumps" },
        ["policy"] = "adaptive",
        ["gate"] = new JsonObject
        {
            ["targetError"] = 0.1,
            ["confidence"] = 0.8,
            ["maxTeachingItems"] = maxTeaching,
            ["retakes"] = retakes,
            ["test"] = new JsonObject { ["mode"] = "fixed", ["maxItems"] = testItems, ["delta"] = 0.6 },
        },
    };

    public sealed record Keys(string ProjectId, string OwnerKey, string EmbedKey);

    public async Task<Keys> CreateProjectAsync(JsonObject? project = null)
    {
        var response = await Client(AdminKey).PostAsJsonAsync("/api/v1/projects", project ?? ProjectJson());
        var body = await Api.JsonAsync(response, 201);
        return new Keys(body["projectId"]!.GetValue<string>(), body["ownerKey"]!.GetValue<string>(), body["embedKey"]!.GetValue<string>());
    }

    /// <summary>A project with items and a ready model version.</summary>
    public async Task<Keys> ReadyProjectAsync(JsonObject? project = null, string? items = null)
    {
        var keys = await CreateProjectAsync(project);
        var owner = Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(items ?? ItemsJsonl())), 200);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        return keys;
    }

    public sealed record StartedSession(string SessionId, string Token, HttpClient Annotator);

    public async Task<StartedSession> StartSessionAsync(Keys keys, string workerRef = "worker-1")
    {
        var response = await Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef });
        var body = await Api.JsonAsync(response, 201);
        var token = body["token"]!.GetValue<string>();
        return new StartedSession(body["sessionId"]!.GetValue<string>(), token, Client(token));
    }

    /// <summary>Starts the worker's onboarding and answers every item truly, to a release.</summary>
    public async Task ReleaseAsync(Keys keys, string workerRef)
    {
        var (final, _) = await RunAsync(await StartSessionAsync(keys, workerRef), (item, _) => TruthOf(item));
        Assert.Equal("released", final["phase"]!.GetValue<string>());
    }

    /// <summary>A session's evidence as its project's owner reads it (the annotator's own token never sees it).</summary>
    public async Task<JsonNode?> EvidenceAsync(Keys keys, string sessionId) =>
        (await Api.JsonAsync(await Client(keys.OwnerKey).GetAsync($"/api/v1/sessions/{sessionId}"), 200))["evidence"];

    /// <summary>Answers until the session ends; <paramref name="answer"/> picks the label from the item shown.</summary>
    public static async Task<(JsonNode Final, List<JsonNode> Responses)> RunAsync(StartedSession s, Func<JsonNode, string, string> answer, int maxSteps = 200, Action<JsonNode>? onResponse = null)
    {
        var responses = new List<JsonNode>();
        for (var i = 0; i < maxSteps; i++)
        {
            var next = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
            if (next["item"] is null) return (next, responses);
            var item = next["item"]!;
            var response = await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers", new
            {
                step = next["step"]!.GetValue<int>(),
                itemRef = item["ref"]!.GetValue<string>(),
                label = answer(item, next["phase"]!.GetValue<string>()),
            });
            var body = await Api.JsonAsync(response, 200);
            responses.Add(body);
            onResponse?.Invoke(body);
            if (body["phase"]!.GetValue<string>() is "released" or "failed") return (body, responses);
        }
        throw new InvalidOperationException("The session did not end.");
    }
}

/// <summary>Sets the connection's peer address from <see cref="TestApp.PeerHeader"/>, before anything else sees the request.</summary>
internal sealed class TestPeerFilter : IStartupFilter
{
    public Action<IApplicationBuilder> Configure(Action<IApplicationBuilder> next) => app =>
    {
        app.Use((http, nextMiddleware) =>
        {
            if (http.Request.Headers.TryGetValue(TestApp.PeerHeader, out var peer) && System.Net.IPAddress.TryParse(peer.ToString(), out var address))
                http.Connection.RemoteIpAddress = address;
            return nextMiddleware(http);
        });
        next(app);
    };
}

public static class Api
{
    public static StringContent Jsonl(string body) => new(body, Encoding.UTF8, "application/x-ndjson");

    public static StringContent RawJson(string body) => new(body, Encoding.UTF8, "application/json");

    public static async Task<JsonNode> JsonAsync(HttpResponseMessage response, int expectedStatus)
    {
        var text = await response.Content.ReadAsStringAsync();
        Assert.True((int)response.StatusCode == expectedStatus, $"expected {expectedStatus}, got {(int)response.StatusCode}: {text}");
        return JsonNode.Parse(text)!;
    }

    /// <summary>Asserts an RFC 9457 problem details response with this status.</summary>
    public static async Task<JsonNode> ProblemAsync(HttpResponseMessage response, int expectedStatus)
    {
        var text = await response.Content.ReadAsStringAsync();
        Assert.True((int)response.StatusCode == expectedStatus, $"expected {expectedStatus}, got {(int)response.StatusCode}: {text}");
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        var problem = JsonNode.Parse(text)!;
        Assert.Equal(expectedStatus, problem["status"]!.GetValue<int>());
        Assert.NotNull(problem["title"]);
        return problem;
    }
}
