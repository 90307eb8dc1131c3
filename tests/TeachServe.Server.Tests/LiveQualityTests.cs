using System.Net.Http.Json;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Core;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Tests;

/// <summary>Live-check outcomes of released annotators over HTTP: retry safety, validation, monitoring, erasure, keys.</summary>
public sealed class LiveQualityTests
{
    private static readonly DateTimeOffset Start = new(2026, 2, 1, 8, 0, 0, TimeSpan.Zero);

    /// <summary>Teach items t00..t19 have x = 0..19: sound below 10, defect from 10.</summary>
    private static string ItemId(int i) => $"t{i:00}";

    private static string Truth(int i) => i < 10 ? "sound" : "defect";

    private static object Outcome(string id, string worker, int item, string label, int minute) =>
        new { outcomeId = id, workerRef = worker, itemId = ItemId(item), label, answeredAt = Start.AddMinutes(minute) };

    private static Task<HttpResponseMessage> PostAsync(TestApp app, TestApp.Keys keys, params object[] outcomes) =>
        app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/live-checks", new { outcomes });

    private static async Task<JsonNode> HistoryAsync(TestApp app, TestApp.Keys keys, string worker) =>
        await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality/{worker}"), 200);

    [Fact]
    public async Task The_same_outcome_twice_is_stored_once_and_a_changed_body_is_refused()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w1");

        var batch = new[] { Outcome("o1", "w1", 2, "sound", 3), Outcome("o2", "w1", 12, "sound", 1), Outcome("o3", "w1", 4, "sound", 2) };
        var first = await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        Assert.Equal(3, first["stored"]!.GetValue<int>());
        var again = await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        Assert.Equal(0, again["stored"]!.GetValue<int>());
        Assert.Equal(3, again["duplicates"]!.GetValue<int>());

        var changed = await Api.ProblemAsync(await PostAsync(app, keys, Outcome("o4", "w1", 5, "sound", 4), Outcome("o2", "w1", 12, "defect", 1)), 409);
        Assert.Equal(1, changed["errors"]![0]!["index"]!.GetValue<int>());

        var history = await HistoryAsync(app, keys, "w1");
        Assert.Equal(3, history["annotator"]!["checks"]!.GetValue<int>());
        Assert.Equal(1, history["annotator"]!["errors"]!.GetValue<int>());
        // Applied in order of answered time, not of arrival; o4 of the refused batch was not stored.
        Assert.Equal(["o2", "o3", "o1"], history["outcomes"]!.AsArray().Select(o => o!["outcomeId"]!.GetValue<string>()));
        Assert.True(history["outcomes"]![0]!["wrong"]!.GetValue<bool>());
    }

    [Fact]
    public async Task Batches_sent_at_once_are_each_all_or_nothing_and_every_outcome_is_counted_once()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w1");
        await app.ReleaseAsync(keys, "w2");
        // Sixteen batches at once (the writer stores whichever are waiting together): each has five outcomes of its own,
        // answered in an order that interleaves the batches (so monitors are rebuilt), and the same "shared" outcome;
        // batches 0 and 1 also carry "contested" with different labels, so whichever comes second is refused whole.
        static object[] Batch(int b) =>
        [
            .. Enumerable.Range(0, 5).Select(k => Outcome($"b{b}-{k}", k % 2 == 0 ? "w1" : "w2", (b + k) % 20, Truth((b + k) % 20), (k * 16) + b)),
            Outcome("shared", "w1", 3, "sound", 200),
            .. b < 2 ? [Outcome("contested", "w2", 4, b == 0 ? "sound" : "defect", 201)] : Array.Empty<object>(),
        ];
        var responses = await Task.WhenAll(Enumerable.Range(0, 16).Select(b => PostAsync(app, keys, Batch(b))));

        var codes = responses.Select(r => (int)r.StatusCode).ToList();
        Assert.Equal([200, 409], codes.Take(2).Order());
        Assert.All(codes.Skip(2), c => Assert.Equal(200, c));
        var answers = new List<JsonNode>();
        foreach (var r in responses.Where(r => r.IsSuccessStatusCode)) answers.Add(await Api.JsonAsync(r, 200));
        // 15 accepted batches × 5, "shared" once, "contested" once; "shared" is a duplicate in the other 14.
        Assert.Equal(77, answers.Sum(a => a["stored"]!.GetValue<int>()));
        Assert.Equal(14, answers.Sum(a => a["duplicates"]!.GetValue<int>()));

        var refused = codes[0] == 409 ? 0 : 1;
        var h1 = await HistoryAsync(app, keys, "w1");
        var h2 = await HistoryAsync(app, keys, "w2");
        var ids = h1["outcomes"]!.AsArray().Concat(h2["outcomes"]!.AsArray()).Select(o => o!["outcomeId"]!.GetValue<string>()).ToList();
        Assert.Equal(77, ids.Distinct().Count());
        Assert.Equal(77, ids.Count);
        Assert.DoesNotContain(ids, id => id.StartsWith($"b{refused}-", StringComparison.Ordinal));
        Assert.Equal(77, h1["annotator"]!["checks"]!.GetValue<int>() + h2["annotator"]!["checks"]!.GetValue<int>());
        foreach (var h in new[] { h1, h2 })
            Assert.Equal(h["outcomes"]!.AsArray().Count, h["annotator"]!["checks"]!.GetValue<int>());
        // Every outcome is right except "contested" with label defect (item 4 is sound), stored when batch 1 won.
        var contested = codes[0] == 409 ? "defect" : "sound";
        Assert.Equal(contested, h2["outcomes"]!.AsArray().Single(o => o!["outcomeId"]!.GetValue<string>() == "contested")!["label"]!.GetValue<string>());
        Assert.Equal(0, h1["annotator"]!["errors"]!.GetValue<int>());
        Assert.Equal(contested == "defect" ? 1 : 0, h2["annotator"]!["errors"]!.GetValue<int>());
    }

    [Fact]
    public async Task An_invalid_line_stores_nothing_of_the_batch_and_names_each_line()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w1");
        await app.StartSessionAsync(keys, "still-learning");

        var problem = await Api.ProblemAsync(await PostAsync(app, keys,
            Outcome("ok", "w1", 1, "sound", 1),
            Outcome("a", "nobody", 1, "sound", 2),
            Outcome("b", "still-learning", 1, "sound", 3),
            new { outcomeId = "c", workerRef = "w1", itemId = "no-such-item", label = "sound", answeredAt = Start },
            Outcome("d", "w1", 1, "maybe", 4)), 422);
        var errors = problem["errors"]!.AsArray().Select(e => (e!["index"]!.GetValue<int>(), e["field"]!.GetValue<string>())).ToList();
        Assert.Equal([(1, "workerRef"), (2, "workerRef"), (3, "itemId"), (4, "label")], errors);

        await Api.ProblemAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality/w1"), 404);
        var list = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality"), 200);
        Assert.Empty(list["annotators"]!.AsArray());
        using var scope = app.Services.CreateScope();
        Assert.Equal(0, await scope.ServiceProvider.GetRequiredService<TeachServeDb>().LiveChecks.CountAsync());

        await Api.ProblemAsync(await PostAsync(app, keys), 422);
    }

    [Fact]
    public async Task An_annotator_answering_at_random_comes_due_for_a_refresher_while_a_perfect_one_stays_reliable()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "steady");
        await app.ReleaseAsync(keys, "clicker");

        var random = new SeededRandom(15);
        int? dueAfter = null;
        for (var batch = 0; batch < 10; batch++)
        {
            var outcomes = new List<object>();
            for (var k = 0; k < 20; k++)
            {
                var n = (batch * 20) + k;
                var item = random.NextInt(20);
                outcomes.Add(Outcome($"s{n}", "steady", item, Truth(item), n));
                outcomes.Add(Outcome($"c{n}", "clicker", item, random.NextInt(2) == 0 ? "sound" : "defect", n));
            }
            var stored = await Api.JsonAsync(await PostAsync(app, keys, [.. outcomes]), 200);
            var statuses = stored["annotators"]!.AsArray().ToDictionary(a => a!["workerRef"]!.GetValue<string>(), a => a!["status"]!.GetValue<string>());
            Assert.Equal("reliable", statuses["steady"]);
            if (dueAfter is null && statuses["clicker"] is "refresher-due" or "paused") dueAfter = (batch + 1) * 20;
        }

        // Answer error p0 = 0.95·0.1 + 0.05/2 = 0.12 against p1 = 0.5 (drift capped at random answering): the chart's
        // run length at error 0.5 is a few checks, so 60 leaves a wide margin; the seed fixes the outcome.
        Assert.NotNull(dueAfter);
        Assert.True(dueAfter <= 60, $"due after {dueAfter} checks");
        var list = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality"), 200);
        var byWorker = list["annotators"]!.AsArray().ToDictionary(a => a!["workerRef"]!.GetValue<string>(), a => a!);
        Assert.Equal("reliable", byWorker["steady"]["status"]!.GetValue<string>());
        Assert.Equal(0, byWorker["steady"]["alarms"]!.GetValue<int>());
        Assert.Equal(200, byWorker["steady"]["checks"]!.GetValue<int>());
        Assert.Equal(0.0, byWorker["steady"]["liveErrorLow"]!.GetValue<double>());
        var clicker = byWorker["clicker"];
        Assert.True(clicker["alarms"]!.GetValue<int>() >= 1);
        Assert.NotNull(clicker["lastAlarmAt"]);
        Assert.InRange(clicker["liveError"]!.GetValue<double>(), clicker["liveErrorLow"]!.GetValue<double>(), clicker["liveErrorHigh"]!.GetValue<double>());
        Assert.InRange(clicker["liveError"]!.GetValue<double>(), 0.35, 0.65);

        // Each status change is an event of the project's log, for the clicker only.
        var events = await SimulatedAnnotators.EventsAsync(app.Client(keys.OwnerKey), keys.ProjectId);
        var changes = events.Where(e => e["type"]!.GetValue<string>() == "live.status").ToList();
        Assert.Contains(changes, e => e["data"]!["to"]!.GetValue<string>() == "refresher-due");
        Assert.All(changes, e => Assert.Equal("clicker", e["workerRef"]!.GetValue<string>()));
    }

    [Fact]
    public async Task An_earlier_outcome_arriving_late_rebuilds_the_state_as_if_it_had_come_in_order()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "late");
        await app.ReleaseAsync(keys, "ordered");
        // The same twenty answers, every fourth wrong: in time order each error is followed by three right answers,
        // which bring the chart back to zero (a wrong answer adds ln(0.5/0.12) ≈ 1.43 nats, a right one takes
        // ln(0.88/0.5) ≈ 0.57), so it never alarms. The late worker's five errors arrive after the right answers;
        // applied in arrival order they would be five in a row, 7.1 nats, past any limit with ARL0 500 (Lorden 1971:
        // h ≤ ln 500 ≈ 6.2 nats suffices).
        var answers = Enumerable.Range(0, 20).ToList();
        static string Label(int n) => n % 4 == 0 ? (Truth(n) == "sound" ? "defect" : "sound") : Truth(n);
        await Api.JsonAsync(await PostAsync(app, keys, [.. answers.Select(n => Outcome($"o{n}", "ordered", n, Label(n), n))]), 200);
        await Api.JsonAsync(await PostAsync(app, keys, [.. answers.Where(n => n % 4 != 0).Select(n => Outcome($"l{n}", "late", n, Label(n), n))]), 200);
        await Api.JsonAsync(await PostAsync(app, keys, [.. answers.Where(n => n % 4 == 0).Select(n => Outcome($"l{n}", "late", n, Label(n), n))]), 200);

        var ordered = (await HistoryAsync(app, keys, "ordered"))["annotator"]!;
        var late = (await HistoryAsync(app, keys, "late"))["annotator"]!;
        Assert.Equal(0, ordered["alarms"]!.GetValue<int>());
        foreach (var field in new[] { "status", "checks", "errors", "alarms", "countView" })
            Assert.Equal(ordered[field]!.ToJsonString(), late[field]!.ToJsonString());
        // The model view too (each worker's from their own release belief): the stored view, moved batch by batch or
        // rebuilt, equals the replay of the log to the last bit.
        foreach (var worker in new[] { "ordered", "late" })
        {
            var history = await HistoryAsync(app, keys, worker);
            Assert.Equal(history["outcomes"]!.AsArray()[^1]!["modelPredictedError"]!.ToJsonString(), history["annotator"]!["modelPredictedError"]!.ToJsonString());
        }
        Assert.Equal(20, late["checks"]!.GetValue<int>());
        Assert.Equal(5, late["errors"]!.GetValue<int>());
    }

    [Fact]
    public async Task Erasing_a_worker_removes_their_live_checks_and_monitor()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "gone");
        await app.ReleaseAsync(keys, "kept");
        await Api.JsonAsync(await PostAsync(app, keys,
            Outcome("g1", "gone", 1, "defect", 1), Outcome("g2", "gone", 2, "defect", 2), Outcome("k1", "kept", 1, "sound", 1)), 200);

        using (var before = app.Services.CreateScope())
        {
            // The model view's belief is stored per annotator, in the monitor row that erasure deletes.
            var monitor = await before.ServiceProvider.GetRequiredService<TeachServeDb>().LiveMonitors.AsNoTracking().FirstAsync(m => m.WorkerRef == "gone");
            Assert.NotNull(monitor.Belief);
            Assert.NotNull(monitor.ModelError);
        }
        var erased = await Api.JsonAsync(await app.Client(keys.OwnerKey).DeleteAsync($"/api/v1/projects/{keys.ProjectId}/workers/gone"), 200);
        Assert.Equal(2, erased["liveChecks"]!.GetValue<int>());

        await Api.ProblemAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality/gone"), 404);
        Assert.Equal(1, (await HistoryAsync(app, keys, "kept"))["annotator"]!["checks"]!.GetValue<int>());
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.False(await db.LiveChecks.AnyAsync(c => c.WorkerRef == "gone"));
        Assert.False(await db.LiveMonitors.AnyAsync(m => m.WorkerRef == "gone"));
        Assert.False(await db.Events.AnyAsync(e => e.WorkerRef == "gone"));
        // Erased and never released again: the worker is unknown to the outcomes endpoint.
        await Api.ProblemAsync(await PostAsync(app, keys, Outcome("g3", "gone", 3, "sound", 3)), 422);
    }

    [Fact]
    public async Task Only_the_embed_key_posts_outcomes_and_only_the_owner_key_reads_them()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w1");
        await Api.ProblemAsync(await app.Client(keys.OwnerKey).PostAsJsonAsync(
            $"/api/v1/projects/{keys.ProjectId}/live-checks", new { outcomes = new[] { Outcome("o1", "w1", 1, "sound", 1) } }), 403);
        await Api.JsonAsync(await PostAsync(app, keys, Outcome("o1", "w1", 1, "sound", 1)), 200);
        await Api.ProblemAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality"), 403);
        await Api.ProblemAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality/w1"), 403);
        var other = await app.ReadyProjectAsync();
        await Api.ProblemAsync(await app.Client(other.EmbedKey).PostAsJsonAsync(
            $"/api/v1/projects/{keys.ProjectId}/live-checks", new { outcomes = new[] { Outcome("o2", "w1", 1, "sound", 1) } }), 404);
    }
}
