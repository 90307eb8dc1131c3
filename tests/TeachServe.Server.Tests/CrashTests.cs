using System.Diagnostics;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json.Nodes;
using Npgsql;
using TeachServe.Load;

namespace TeachServe.Server.Tests;

/// <summary>
/// The server is killed with SIGKILL while simulated annotators answer; after a restart every answer a client
/// saw acknowledged is in the event log exactly once, with the response the client got, and every session
/// continues at the step after its last stored answer.
/// </summary>
public sealed class CrashTests
{
    private const string AdminKey = "tsa.crash-test-admin-key-0123456789";

    [Theory]
    [InlineData(11)]
    public async Task Acknowledged_answers_survive_a_SIGKILL_exactly_once_on_sqlite(int seed)
    {
        var data = TestApp.NewDataDirectory();
        try
        {
            await CrashAndCheckAsync(seed, new Dictionary<string, string> { ["TeachServe:DataDirectory"] = data });
        }
        finally
        {
            try { Directory.Delete(data, recursive: true); } catch (IOException) { }
        }
    }

    [Fact]
    public async Task Acknowledged_answers_survive_a_SIGKILL_exactly_once_on_postgres()
    {
        // test.sh always provides a throwaway cluster; without one this test fails rather than passing unseen.
        var admin = Environment.GetEnvironmentVariable(TestDatabase.ServerVariable) is { Length: > 0 } server
            ? server
            : throw new InvalidOperationException($"{TestDatabase.ServerVariable} is not set: run ./test.sh, which starts a throwaway PostgreSQL cluster.");
        var name = "ts_crash_" + Guid.NewGuid().ToString("N")[..12];
        await using (var c = new NpgsqlConnection(admin))
        {
            await c.OpenAsync();
            await using var create = new NpgsqlCommand($"CREATE DATABASE \"{name}\"", c);
            await create.ExecuteNonQueryAsync();
        }
        try
        {
            var connection = new NpgsqlConnectionStringBuilder(admin) { Database = name }.ConnectionString;
            await CrashAndCheckAsync(21, new Dictionary<string, string>
            {
                ["TeachServe:Database:Provider"] = "postgres",
                ["TeachServe:Database:ConnectionString"] = connection,
                ["TeachServe:DataDirectory"] = TestApp.NewDataDirectory(),
            });
        }
        finally
        {
            NpgsqlConnection.ClearAllPools();
            await using var c = new NpgsqlConnection(admin);
            await c.OpenAsync();
            await using var drop = new NpgsqlCommand($"DROP DATABASE IF EXISTS \"{name}\" WITH (FORCE)", c);
            await drop.ExecuteNonQueryAsync();
        }
    }

    private static async Task CrashAndCheckAsync(int seed, Dictionary<string, string> settings)
    {
        settings["TeachServe:AdminKey"] = AdminKey;
        settings["TeachServe:LoadDemo"] = "false";
        settings["TeachServe:RateLimit:PermitLimit"] = "1000000";
        var port = ServerProcess.FreePort();
        var random = new Random(seed);
        var killAfter = random.Next(40, 400);

        using var runner = new LoadRunner(new LoadOptions
        {
            Url = new Uri($"http://127.0.0.1:{port}"), AdminKey = AdminKey, Annotators = 16, Seed = seed,
            Duration = TimeSpan.FromSeconds(60), Warmup = TimeSpan.Zero, BaselineDuration = TimeSpan.Zero, MaxRequests = 50_000,
            RecordAcknowledged = true, TolerateErrors = true,
        }, TextWriter.Null);

        using (var server = await ServerProcess.StartAsync(settings, port))
        {
            using var stop = new CancellationTokenSource();
            var load = runner.RunAsync(stop.Token);
            // The seeded moment: as soon as a seeded number of answers is acknowledged (or the load ends; 60 s at most).
            Task reached = Task.WhenAny(runner.WhenAcknowledgedAsync(killAfter), load).WaitAsync(TimeSpan.FromSeconds(60));
            await reached.ConfigureAwait(ConfigureAwaitOptions.SuppressThrowing);
            Assert.True(runner.Acknowledged.Count >= killAfter, $"only {runner.Acknowledged.Count} answers before the kill:\n{server.Output}");
            server.Kill();
            await stop.CancelAsync();
            try { await load; } catch (OperationCanceledException) { }
        }
        var acknowledged = runner.Acknowledged;
        var sessions = runner.Sessions;
        Assert.NotEmpty(sessions);

        using var restarted = await ServerProcess.StartAsync(settings, port);
        using var owner = Client(restarted.Url, runner.OwnerKey!);
        var events = (await owner.GetStringAsync($"/api/v1/projects/{runner.ProjectId}/events"))
            .Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => JsonNode.Parse(l)!).ToList();
        var answers = events.Where(e => e["type"]!.GetValue<string>() == "answer")
            .GroupBy(e => (Session: e["sessionId"]!.GetValue<string>(), Step: e["step"]!.GetValue<int>()))
            .ToDictionary(g => g.Key, g => g.ToList());

        Assert.All(answers, a => Assert.Single(a.Value));
        foreach (var ack in acknowledged)
        {
            Assert.True(answers.TryGetValue((ack.SessionId, ack.Step), out var stored), $"acknowledged answer {ack.SessionId}/{ack.Step} is missing");
            var data = stored![0]["data"]!;
            Assert.Equal(ack.ItemRef, data["itemRef"]!.GetValue<string>());
            Assert.Equal(ack.Label, data["label"]!.GetValue<string>());
            Assert.True(JsonNode.DeepEquals(JsonNode.Parse(ack.Response), data["response"]), $"stored response differs for {ack.SessionId}/{ack.Step}");
        }

        foreach (var s in sessions)
        {
            var steps = answers.Keys.Where(k => k.Session == s.SessionId).Select(k => k.Step).Order().ToList();
            Assert.Equal(Enumerable.Range(0, steps.Count), steps);
            var view = await owner.GetFromJsonAsync<JsonNode>($"/api/v1/sessions/{s.SessionId}");
            Assert.Equal(steps.Count, view!["step"]!.GetValue<int>());
            if (view["phase"]!.GetValue<string>() is "released" or "failed") continue;

            // The annotator carries on where the log says, and its last acknowledged answer replays identically.
            using var annotator = Client(restarted.Url, s.Token);
            var next = await Api.JsonAsync(await annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
            Assert.Equal(steps.Count, next["step"]!.GetValue<int>());
            if (acknowledged.LastOrDefault(a => a.SessionId == s.SessionId) is { } last)
            {
                var again = await Api.JsonAsync(await annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
                    new { step = last.Step, itemRef = last.ItemRef, label = last.Label }), 200);
                Assert.True(JsonNode.DeepEquals(JsonNode.Parse(last.Response), again));
            }
            var item = next["item"]!;
            var answered = await Api.JsonAsync(await annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
                new { step = steps.Count, itemRef = item["ref"]!.GetValue<string>(), label = item["labels"]![0]!.GetValue<string>() }), 200);
            Assert.Equal(steps.Count + 1, answered["step"]!.GetValue<int>());
        }
    }

    private static HttpClient Client(Uri url, string key)
    {
        var client = new HttpClient { BaseAddress = url, Timeout = TimeSpan.FromSeconds(30) };
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }
}
