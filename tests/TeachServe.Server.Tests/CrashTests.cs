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
    public Task Acknowledged_answers_survive_a_SIGKILL_exactly_once_on_postgres() =>
        OnPostgresAsync(settings => CrashAndCheckAsync(21, settings));

    [Theory]
    [InlineData(12)]
    public async Task Acknowledged_live_check_outcomes_survive_a_SIGKILL_exactly_once_on_sqlite(int seed)
    {
        var data = TestApp.NewDataDirectory();
        try
        {
            await CrashOutcomesAndCheckAsync(seed, new Dictionary<string, string> { ["TeachServe:DataDirectory"] = data });
        }
        finally
        {
            try { Directory.Delete(data, recursive: true); } catch (IOException) { }
        }
    }

    [Fact]
    public Task Acknowledged_live_check_outcomes_survive_a_SIGKILL_exactly_once_on_postgres() =>
        OnPostgresAsync(settings => CrashOutcomesAndCheckAsync(22, settings));

    /// <summary>Runs <paramref name="test"/> on a database of its own in the throwaway cluster, dropped afterwards.</summary>
    private static async Task OnPostgresAsync(Func<Dictionary<string, string>, Task> test)
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
            await test(new Dictionary<string, string>
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

    /// <summary>
    /// Senders post batches of live-check outcomes until a seeded number is acknowledged; SIGKILL; restart on the same
    /// data. Every acknowledged outcome is stored exactly once with the body sent, each annotator's monitor counts exactly
    /// their stored outcomes (checks and errors), and sending the acknowledged outcomes again stores nothing.
    /// </summary>
    private static async Task CrashOutcomesAndCheckAsync(int seed, Dictionary<string, string> settings)
    {
        settings["TeachServe:AdminKey"] = AdminKey;
        settings["TeachServe:LoadDemo"] = "false";
        settings["TeachServe:RateLimit:PermitLimit"] = "1000000";
        var port = ServerProcess.FreePort();
        var random = new Random(seed);
        var killAfter = random.Next(200, 2000);
        var batch = random.Next(1, 21);

        using var runner = new LoadRunner(new LoadOptions
        {
            Url = new Uri($"http://127.0.0.1:{port}"), AdminKey = AdminKey, Annotators = 16, Seed = seed,
            Mode = LoadMode.LiveChecks, Batch = batch, Released = 32,
            Duration = TimeSpan.FromSeconds(60), Warmup = TimeSpan.Zero, BaselineDuration = TimeSpan.Zero, MaxRequests = 20_000,
            RecordAcknowledged = true, TolerateErrors = true,
        }, TextWriter.Null);

        using (var server = await ServerProcess.StartAsync(settings, port))
        {
            using var stop = new CancellationTokenSource();
            var load = runner.RunAsync(stop.Token);
            // The seeded moment: as soon as a seeded number of outcomes is acknowledged (or the load ends; 120 s at most,
            // releasing the annotators included).
            Task reached = Task.WhenAny(runner.WhenAcknowledgedAsync(killAfter), load).WaitAsync(TimeSpan.FromSeconds(120));
            await reached.ConfigureAwait(ConfigureAwaitOptions.SuppressThrowing);
            Assert.True(runner.AcknowledgedOutcomes.Count >= killAfter, $"only {runner.AcknowledgedOutcomes.Count} outcomes before the kill:\n{server.Output}");
            server.Kill();
            await stop.CancelAsync();
            try { await load; } catch (OperationCanceledException) { }
        }
        var acknowledged = runner.AcknowledgedOutcomes;
        Assert.Equal(acknowledged.Count, acknowledged.Select(o => o.OutcomeId).Distinct().Count());

        using var restarted = await ServerProcess.StartAsync(settings, port);
        using var owner = Client(restarted.Url, runner.OwnerKey!);
        var stored = new Dictionary<string, (string Worker, JsonNode Outcome)>(StringComparer.Ordinal);
        foreach (var worker in runner.Released)
        {
            using var response = await owner.GetAsync($"/api/v1/projects/{runner.ProjectId}/live-quality/{worker}");
            if (response.StatusCode == System.Net.HttpStatusCode.NotFound)
            {
                Assert.DoesNotContain(acknowledged, o => o.WorkerRef == worker);
                continue;
            }
            var history = await Api.JsonAsync(response, 200);
            var outcomes = history["outcomes"]!.AsArray().Select(o => o!).ToList();
            // The history lists the newest 1,000; below that it is every stored outcome of the worker.
            Assert.True(outcomes.Count < 1000, $"{worker} has {outcomes.Count} outcomes: the history may be cut");
            foreach (var o in outcomes) Assert.True(stored.TryAdd(o["outcomeId"]!.GetValue<string>(), (worker, o)), $"{o["outcomeId"]} is stored twice");
            // The monitor counts exactly the stored outcomes: none applied twice, none lost between the rows and the state.
            Assert.Equal(outcomes.Count, history["annotator"]!["checks"]!.GetValue<int>());
            Assert.Equal(outcomes.Count(o => o["wrong"]!.GetValue<bool>()), history["annotator"]!["errors"]!.GetValue<int>());
        }

        foreach (var ack in acknowledged)
        {
            Assert.True(stored.TryGetValue(ack.OutcomeId, out var s), $"acknowledged outcome {ack.OutcomeId} is missing");
            Assert.Equal(ack.WorkerRef, s.Worker);
            Assert.Equal(ack.ItemId, s.Outcome["itemId"]!.GetValue<string>());
            Assert.Equal(ack.Label, s.Outcome["label"]!.GetValue<string>());
            Assert.Equal(ack.Wrong, s.Outcome["wrong"]!.GetValue<bool>());
            Assert.Equal(ack.AnsweredAt, s.Outcome["answeredAt"]!.GetValue<DateTimeOffset>());
        }

        // A platform retrying after the outage: every acknowledged outcome again is a duplicate, and nothing moves.
        using var platform = Client(restarted.Url, runner.EmbedKey!);
        foreach (var chunk in acknowledged.Chunk(1000))
        {
            var again = await Api.JsonAsync(await platform.PostAsJsonAsync($"/api/v1/projects/{runner.ProjectId}/live-checks", new
            {
                outcomes = chunk.Select(o => new { outcomeId = o.OutcomeId, workerRef = o.WorkerRef, itemId = o.ItemId, label = o.Label, answeredAt = o.AnsweredAt }),
            }), 200);
            Assert.Equal(0, again["stored"]!.GetValue<int>());
            Assert.Equal(chunk.Length, again["duplicates"]!.GetValue<int>());
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
