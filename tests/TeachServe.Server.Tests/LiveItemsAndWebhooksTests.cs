using System.Globalization;
using System.Net.Http.Json;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Core;
using TeachServe.Server.Persistence;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Tests;

/// <summary>
/// Live checks beyond the basics: the live item pool, items carried inline by outcomes, status webhooks, the paged
/// list, and concurrent batches.
/// </summary>
public sealed class LiveItemsAndWebhooksTests
{
    private static readonly DateTimeOffset Start = new(2026, 2, 1, 8, 0, 0, TimeSpan.Zero);

    private static string Truth(int i) => i < 10 ? "sound" : "defect";

    private static string Wrong(int i) => i < 10 ? "defect" : "sound";

    private static async Task ReleaseAsync(TestApp app, TestApp.Keys keys, string workerRef)
    {
        var (final, _) = await TestApp.RunAsync(await app.StartSessionAsync(keys, workerRef), (item, _) => TestApp.TruthOf(item));
        Assert.Equal("released", final["phase"]!.GetValue<string>());
    }

    private static JsonObject Outcome(string id, string worker, string itemId, string label, double minute, object? item = null)
    {
        var o = new JsonObject
        {
            ["outcomeId"] = id, ["workerRef"] = worker, ["itemId"] = itemId, ["label"] = label,
            ["answeredAt"] = Start.AddMinutes(minute).ToString("O", CultureInfo.InvariantCulture),
        };
        if (item is not null) o["item"] = JsonSerializer.SerializeToNode(item);
        return o;
    }

    private static JsonObject Check(string id, string worker, int item, string label, double minute) =>
        Outcome(id, worker, $"t{item:00}", label, minute);

    private static Task<HttpResponseMessage> PostAsync(TestApp app, TestApp.Keys keys, IEnumerable<JsonObject> outcomes) =>
        app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/live-checks",
            new JsonObject { ["outcomes"] = new JsonArray([.. outcomes.Select(o => o.DeepClone())]) });

    private static async Task<JsonNode> HistoryAsync(TestApp app, TestApp.Keys keys, string worker) =>
        await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality/{worker}"), 200);

    private static string LiveItemsJsonl(params int[] xs) =>
        string.Join('\n', xs.Select(x => TestApp.Item($"g{x:00}", "live", x)));

    [Fact]
    public async Task Live_items_are_counted_but_a_version_compiles_the_same_with_or_without_them()
    {
        using var app = new TestApp();
        var plain = await app.ReadyProjectAsync();

        var withLive = await app.CreateProjectAsync();
        var owner = app.Client(withLive.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{withLive.ProjectId}/items", Api.Jsonl(TestApp.ItemsJsonl())), 200);
        var uploaded = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{withLive.ProjectId}/items", Api.Jsonl(LiveItemsJsonl(3, 15, 18))), 200);
        Assert.Equal(3, uploaded["total"]!["live"]!.GetValue<int>());
        Assert.Equal(20, uploaded["total"]!["teach"]!.GetValue<int>());
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{withLive.ProjectId}/versions", null), 201);
        var view = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{withLive.ProjectId}"), 200);
        Assert.Equal(3, view["items"]!["live"]!.GetValue<int>());

        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            var a = await db.ModelVersions.AsNoTracking().SingleAsync(v => v.ProjectId == plain.ProjectId);
            var b = await db.ModelVersions.AsNoTracking().SingleAsync(v => v.ProjectId == withLive.ProjectId);
            Assert.Equal(a.SnapshotHash, b.SnapshotHash);
            Assert.Equal(a.ItemsJson, b.ItemsJson);
            // The compiled model and its summary, apart from how long compiling took and what it used (the stored model
            // carries those measurements too, so its bytes differ run to run).
            Assert.Equal((a.HypothesisCount, a.TargetIndex), (b.HypothesisCount, b.TargetIndex));
            Assert.Equal(Unmeasured(a.SummaryJson!), Unmeasured(b.SummaryJson!));
            Assert.Equal((a.TeachCount, a.TestCount), (b.TeachCount, b.TestCount));
            Assert.DoesNotContain("\"g03\"", b.ItemsJson, StringComparison.Ordinal);
        }

        // Adding live items to a compiled project changes nothing a compile sees: the same version answers.
        var plainOwner = app.Client(plain.OwnerKey);
        await Api.JsonAsync(await plainOwner.PostAsync($"/api/v1/projects/{plain.ProjectId}/items", Api.Jsonl(LiveItemsJsonl(4))), 200);
        var again = await Api.JsonAsync(await plainOwner.PostAsync($"/api/v1/projects/{plain.ProjectId}/versions", null), 200);
        Assert.Equal(1, again["version"]!.GetValue<int>());

        var bad = await Api.ProblemAsync(await plainOwner.PostAsync($"/api/v1/projects/{plain.ProjectId}/items",
            Api.Jsonl(TestApp.Item("q1", "gold", 2))), 422);
        Assert.Equal("pool", bad["errors"]![0]!["field"]!.GetValue<string>());
    }

    private static string Unmeasured(string summaryJson)
    {
        var summary = JsonNode.Parse(summaryJson)!.AsObject();
        summary.Remove("compileMilliseconds");
        summary.Remove("memoryBytes");
        return summary.ToJsonString();
    }

    [Fact]
    public async Task An_outcome_may_carry_its_item_which_is_stored_once_as_a_live_item()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await ReleaseAsync(app, keys, "w1");
        var gold = new { label = "defect", features = new Dictionary<string, double> { ["x"] = 15 }, content = new { text = "x=15" } };

        var batch = new[] { Outcome("o1", "w1", "fresh-1", "sound", 1, gold), Outcome("o2", "w1", "fresh-1", "defect", 2) };
        var first = await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        Assert.Equal(2, first["stored"]!.GetValue<int>());
        Assert.Equal(1, first["itemsStored"]!.GetValue<int>());
        // A retry, and a later outcome carrying the same item again, store nothing new.
        var retry = await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        Assert.Equal((0, 2, 0), (retry["stored"]!.GetValue<int>(), retry["duplicates"]!.GetValue<int>(), retry["itemsStored"]!.GetValue<int>()));
        await Api.JsonAsync(await PostAsync(app, keys, [Outcome("o3", "w1", "fresh-1", "defect", 3, gold)]), 200);

        var history = await HistoryAsync(app, keys, "w1");
        Assert.Equal(3, history["annotator"]!["checks"]!.GetValue<int>());
        Assert.Equal(1, history["annotator"]!["errors"]!.GetValue<int>());
        Assert.All(history["outcomes"]!.AsArray(), o => Assert.Equal("defect", o!["knownLabel"]!.GetValue<string>()));

        // The same id with other content, or the id of an uploaded teach item: 409 naming each line; nothing stored.
        var changed = await Api.ProblemAsync(await PostAsync(app, keys, [
            Outcome("o4", "w1", "t02", "sound", 4),
            Outcome("o5", "w1", "fresh-1", "sound", 5, gold with { label = "sound" }),
            Outcome("o6", "w1", "t01", "sound", 6, new { label = "sound", features = new Dictionary<string, double> { ["x"] = 1 }, content = new { text = "x=1" } }),
        ]), 409);
        Assert.Equal([(1, "item"), (2, "item")], changed["errors"]!.AsArray().Select(e => (e!["index"]!.GetValue<int>(), e["field"]!.GetValue<string>())));

        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.Equal(3, await db.LiveChecks.CountAsync());
        var row = await db.Items.AsNoTracking().SingleAsync(i => i.ItemId == "fresh-1");
        Assert.Equal(("live", "defect"), (row.Pool, row.Label));
        var items = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}"), 200);
        Assert.Equal(1, items["items"]!["live"]!.GetValue<int>());
    }

    [Fact]
    public async Task Inline_items_are_checked_like_uploaded_ones_and_a_bad_line_stores_nothing()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await ReleaseAsync(app, keys, "w1");
        var good = new { label = "sound", features = new Dictionary<string, double> { ["x"] = 2 }, content = new { text = "x=2" } };

        var problem = await Api.ProblemAsync(await PostAsync(app, keys, [
            Outcome("a", "w1", "new-a", "sound", 1, good),
            Outcome("b", "w1", "new-b", "sound", 2, new { label = "maybe", features = new Dictionary<string, double> { ["x"] = 2 }, content = new { text = "x" } }),
            Outcome("c", "w1", "new-c", "sound", 3, new { label = "sound", features = new Dictionary<string, double> { ["x"] = 2 } }),
            Outcome("d", "w1", "new-a", "sound", 4, good with { label = "defect" }),
            Outcome("e", "w1", "new-e", "sound", 5, new { label = "sound", content = new { text = "x=3" } }),
        ]), 422);
        var errors = problem["errors"]!.AsArray().Select(e => (e!["index"]!.GetValue<int>(), e["field"]!.GetValue<string>())).ToList();
        Assert.Equal([(1, "item.label"), (2, "item.content"), (3, "item"), (4, "item.features")], errors);

        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.Equal(0, await db.LiveChecks.CountAsync());
        Assert.False(await db.Items.AnyAsync(i => i.Pool == "live"));
    }

    [Fact]
    public async Task Each_status_change_is_one_signed_webhook_and_a_retried_batch_delivers_nothing_twice()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(HookReceiver.ProjectWithHook(receiver.Url));
        var quiet = await app.ReadyProjectAsync();
        await ReleaseAsync(app, keys, "clicker");
        await ReleaseAsync(app, quiet, "clicker");
        var released = await receiver.NextAsync();
        Assert.Equal("org.teachserve.session.released", released.Type);

        // Every answer wrong: the count chart alarms within a few checks (docs/live-quality.md), so the status moves.
        var batch = Enumerable.Range(0, 30).Select(n => Check($"c{n}", "clicker", n % 20, Wrong(n % 20), n)).ToList();
        await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        var retried = await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        Assert.Equal(30, retried["duplicates"]!.GetValue<int>());
        await Api.JsonAsync(await PostAsync(app, quiet, batch), 200);

        var events = (await SimulatedAnnotators.EventsAsync(app.Client(keys.OwnerKey), keys.ProjectId))
            .Where(e => e["type"]!.GetValue<string>() == "live.status").ToList();
        Assert.NotEmpty(events);
        var deliveries = new List<HookReceiver.Delivery>();
        for (var i = 0; i < events.Count; i++) deliveries.Add(await receiver.NextAsync());
        await app.Service<OutboxDispatcher>().Idle;
        Assert.False(receiver.TryTake(out _), "one delivery per status change, none for the retry");

        var status = (await HistoryAsync(app, keys, "clicker"))["annotator"]!["status"]!.GetValue<string>();
        var previous = "reliable";
        foreach (var d in deliveries.OrderBy(d => d.Data["checks"]!.GetValue<int>()))
        {
            Assert.True(StandardWebhooksVerifier.Verify(HookReceiver.Secret, d.Id, d.Timestamp, d.Signature, d.Body, app.Time.GetUtcNow(), TimeSpan.FromMinutes(5)));
            Assert.Equal("org.teachserve.live.status", d.Type);
            var data = d.Data;
            Assert.Equal("clicker", data["workerRef"]!.GetValue<string>());
            Assert.Equal(previous, data["from"]!.GetValue<string>());
            previous = data["to"]!.GetValue<string>();
            var checks = data["checks"]!.GetValue<int>();
            Assert.Equal(checks, data["errors"]!.GetValue<int>());
            // The outcome that caused it is the checks-th of the batch in answered order.
            Assert.Equal($"c{checks - 1}", data["outcomeId"]!.GetValue<string>());
            Assert.Equal(Start.AddMinutes(checks - 1), data["answeredAt"]!.GetValue<DateTimeOffset>());
            Assert.NotNull(data["alarm"]);
            var logged = events.Single(e => e["data"]!["outcomeId"]!.GetValue<string>() == data["outcomeId"]!.GetValue<string>());
            Assert.Equal(logged["data"]!["to"]!.GetValue<string>(), previous);
        }
        Assert.Equal(status, previous);
        Assert.NotEqual("reliable", status);

        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.Equal(events.Count, await db.Outbox.CountAsync(m => m.ProjectId == keys.ProjectId && m.EventType == "live.status"));
        Assert.False(await db.Outbox.AnyAsync(m => m.ProjectId == quiet.ProjectId), "no destination, no delivery");
        Assert.True(await db.Events.AnyAsync(e => e.ProjectId == quiet.ProjectId && e.Type == "live.status"));
    }

    [Fact]
    public async Task A_rebuild_sends_one_delivery_from_the_status_receivers_last_heard_to_the_rebuilt_one()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(HookReceiver.ProjectWithHook(receiver.Url));
        await ReleaseAsync(app, keys, "late");
        Assert.Equal("org.teachserve.session.released", (await receiver.NextAsync()).Type);

        // Twenty answers, every fourth wrong (LiveQualityTests: in time order the chart never alarms). The five wrong
        // ones arrive first and, applied alone, alarm: refresher due. The right ones arrive later but were answered
        // between them, so the state is rebuilt, and in time order it never alarmed.
        var answers = Enumerable.Range(0, 20).ToList();
        await Api.JsonAsync(await PostAsync(app, keys, answers.Where(n => n % 4 == 0).Select(n => Check($"l{n}", "late", n, Wrong(n), n))), 200);
        var afterFirst = (await HistoryAsync(app, keys, "late"))["annotator"]!["status"]!.GetValue<string>();
        Assert.Equal("refresher-due", afterFirst);
        await Api.JsonAsync(await PostAsync(app, keys, answers.Where(n => n % 4 != 0).Select(n => Check($"l{n}", "late", n, Truth(n), n))), 200);
        var final = (await HistoryAsync(app, keys, "late"))["annotator"]!["status"]!.GetValue<string>();
        Assert.NotEqual(afterFirst, final);

        using var scope = app.Services.CreateScope();
        var count = await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Outbox.CountAsync(m => m.EventType == "live.status");
        var deliveries = new List<HookReceiver.Delivery>();
        for (var i = 0; i < count; i++) deliveries.Add(await receiver.NextAsync());
        var ordered = deliveries.OrderBy(d => d.Data["rebuilt"]!.GetValue<bool>()).ThenBy(d => d.Data["checks"]!.GetValue<int>()).ToList();
        Assert.Single(ordered, d => d.Data["rebuilt"]!.GetValue<bool>());
        var previous = "reliable";
        foreach (var d in ordered)
        {
            Assert.Equal(previous, d.Data["from"]!.GetValue<string>());
            previous = d.Data["to"]!.GetValue<string>();
        }
        Assert.Equal(("refresher-due", final), (ordered[^1].Data["from"]!.GetValue<string>(), ordered[^1].Data["to"]!.GetValue<string>()));
    }

    [Fact]
    public async Task The_list_is_paged_by_worker_and_filtered_by_status()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var workers = new[] { "w1", "w2", "w3", "w4", "w5" };
        var outcomes = new List<JsonObject>();
        foreach (var w in workers)
        {
            await ReleaseAsync(app, keys, w);
            // w2 and w4 answer every check wrong, the others every check right.
            var bad = w is "w2" or "w4";
            outcomes.AddRange(Enumerable.Range(0, 20).Select(n => Check($"{w}-{n}", w, n, bad ? Wrong(n) : Truth(n), n)));
        }
        await Api.JsonAsync(await PostAsync(app, keys, outcomes), 200);
        var owner = app.Client(keys.OwnerKey);
        var url = $"/api/v1/projects/{keys.ProjectId}/live-quality";

        var seen = new List<string>();
        string? next = null;
        var pages = 0;
        do
        {
            var page = await Api.JsonAsync(await owner.GetAsync(url + "?limit=2" + (next is null ? "" : "&cursor=" + next)), 200);
            Assert.InRange(page["annotators"]!.AsArray().Count, 1, 2);
            seen.AddRange(page["annotators"]!.AsArray().Select(a => a!["workerRef"]!.GetValue<string>()));
            next = page["next"]?.GetValue<string>();
            pages++;
        }
        while (next is not null);
        Assert.Equal(workers, seen);
        Assert.Equal(3, pages);

        var reliable = await Api.JsonAsync(await owner.GetAsync(url + "?status=reliable"), 200);
        Assert.Equal(["w1", "w3", "w5"], reliable["annotators"]!.AsArray().Select(a => a!["workerRef"]!.GetValue<string>()));
        var all = await Api.JsonAsync(await owner.GetAsync(url), 200);
        var flagged = all["annotators"]!.AsArray().Where(a => a!["status"]!.GetValue<string>() != "reliable").Select(a => a!["workerRef"]!.GetValue<string>());
        Assert.Equal(["w2", "w4"], flagged);
        var one = await Api.JsonAsync(await owner.GetAsync(url + "?status=reliable&limit=1"), 200);
        var rest = await Api.JsonAsync(await owner.GetAsync(url + "?status=reliable&limit=5&cursor=" + one["next"]!.GetValue<string>()), 200);
        Assert.Equal(["w3", "w5"], rest["annotators"]!.AsArray().Select(a => a!["workerRef"]!.GetValue<string>()));

        await Api.ProblemAsync(await owner.GetAsync(url + "?status=asleep"), 400);
        await Api.ProblemAsync(await owner.GetAsync(url + "?cursor=%21%21"), 400);
        await Api.ProblemAsync(await owner.GetAsync(url + "?limit=0"), 400);
    }

    [Fact]
    public async Task Concurrent_batches_land_once_each_and_leave_the_state_a_sequential_replay_gives()
    {
        var workers = new[] { "ann", "bea", "cid" };
        var random = new SeededRandom(41);
        // Eight batches over the same three annotators with answered times drawn across the whole day, so batches
        // overlap in time and a later batch often holds earlier answers (the monitor then rebuilds).
        var batches = new List<List<JsonObject>>();
        var n = 0;
        for (var b = 0; b < 8; b++)
        {
            var batch = new List<JsonObject>();
            for (var k = 0; k < 24; k++, n++)
            {
                var worker = workers[k % 3];
                var item = random.NextInt(20);
                var wrong = random.NextInt(worker == "cid" ? 2 : 8) == 0;
                batch.Add(Check($"o{n}", worker, item, wrong ? Wrong(item) : Truth(item), random.NextInt(24 * 60 * 1000) / 1000.0));
            }
            batches.Add(batch);
        }

        using var concurrent = new TestApp();
        var keys = await concurrent.ReadyProjectAsync();
        foreach (var w in workers) await ReleaseAsync(concurrent, keys, w);
        // Every batch twice (a client retrying while its first attempt is still in flight), all at once.
        var responses = await Task.WhenAll(batches.Concat(batches).Select(b => Task.Run(() => PostAsync(concurrent, keys, b))));
        var bodies = new List<JsonNode>();
        foreach (var r in responses) bodies.Add(await Api.JsonAsync(r, 200));
        Assert.Equal(n, bodies.Sum(b => b["stored"]!.GetValue<int>()));
        Assert.Equal(n, bodies.Sum(b => b["duplicates"]!.GetValue<int>()));
        using (var scope = concurrent.Services.CreateScope())
            Assert.Equal(n, await scope.ServiceProvider.GetRequiredService<TeachServeDb>().LiveChecks.CountAsync());

        using var sequential = new TestApp();
        var seqKeys = await sequential.ReadyProjectAsync();
        foreach (var w in workers) await ReleaseAsync(sequential, seqKeys, w);
        foreach (var outcome in batches.SelectMany(b => b).OrderBy(o => DateTimeOffset.Parse(o["answeredAt"]!.GetValue<string>(), CultureInfo.InvariantCulture)))
            await Api.JsonAsync(await PostAsync(sequential, seqKeys, [outcome]), 200);

        foreach (var w in workers)
        {
            var a = await HistoryAsync(concurrent, keys, w);
            var s = await HistoryAsync(sequential, seqKeys, w);
            // Across the two servers only what does not depend on the release sessions (whose seeds are random): the model
            // view and the candidate rules start from each release's belief, so status and alarms are compared below
            // within each server, against a sequential replay of its own log.
            foreach (var field in new[] { "checks", "errors", "lastAnsweredAt" })
                Assert.Equal(s["annotator"]![field]?.ToJsonString(), a["annotator"]![field]?.ToJsonString());
            var order = a["outcomes"]!.AsArray().Select(o => o!["outcomeId"]!.GetValue<string>()).ToList();
            Assert.Equal(s["outcomes"]!.AsArray().Select(o => o!["outcomeId"]!.GetValue<string>()), order);
            Assert.Equal(order.Count, order.Distinct().Count());
            var times = a["outcomes"]!.AsArray().Select(o => o!["answeredAt"]!.GetValue<DateTimeOffset>()).ToList();
            Assert.Equal(times.Order(), times);
        }
        Assert.Equal(await ReplayedStatesAsync(sequential, seqKeys.ProjectId), await StatesAsync(sequential, seqKeys.ProjectId));
        Assert.Equal(await ReplayedStatesAsync(concurrent, keys.ProjectId), await StatesAsync(concurrent, keys.ProjectId));
    }

    /// <summary>
    /// Each monitor's state, model view and counts as a sequential replay of its stored outcomes gives them (no refreshers
    /// here), in the form of <see cref="StatesAsync"/>.
    /// </summary>
    private static async Task<List<string>> ReplayedStatesAsync(TestApp app, string projectId)
    {
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var live = scope.ServiceProvider.GetRequiredService<LiveQuality.LiveQualityOperations>();
        var rows = await db.LiveMonitors.AsNoTracking().Where(m => m.ProjectId == projectId).OrderBy(m => m.WorkerRef).ToListAsync();
        var states = new List<string>();
        foreach (var m in rows)
        {
            var last = (await live.ReplayAsync(m, CancellationToken.None)).Points[^1];
            states.Add($"{m.WorkerRef}:{Convert.ToHexString(last.Step.State.ToBytes())}:{last.ModelError:R}");
        }
        return states;
    }

    /// <summary>Each monitor's state bytes, by worker: equal bytes mean the same chart values, counts and status.</summary>
    private static async Task<List<string>> StatesAsync(TestApp app, string projectId)
    {
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var rows = await db.LiveMonitors.AsNoTracking().Where(m => m.ProjectId == projectId).OrderBy(m => m.WorkerRef).ToListAsync();
        return rows.Select(m => $"{m.WorkerRef}:{Convert.ToHexString(m.State)}:{m.ModelError:R}").ToList();
    }
}
