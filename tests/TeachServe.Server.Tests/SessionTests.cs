using System.Net.Http.Json;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Tests;

public sealed class SessionTests
{
    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    [Fact]
    public async Task Starting_twice_for_an_active_worker_returns_the_same_session()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var embed = app.Client(keys.EmbedKey);
        var url = $"/api/v1/projects/{keys.ProjectId}/sessions";
        var first = await Api.JsonAsync(await embed.PostAsJsonAsync(url, new { workerRef = "w" }), 201);
        var second = await Api.JsonAsync(await embed.PostAsJsonAsync(url, new { workerRef = "w" }), 200);
        Assert.Equal(first["sessionId"]!.GetValue<string>(), second["sessionId"]!.GetValue<string>());
        Assert.Contains("/annotate/", first["launchUrl"]!.GetValue<string>(), StringComparison.Ordinal);
        // Without resume: true the running session comes back without a token (SessionTakeoverTests).
        Assert.Null(second["token"]);
        // Concurrent starts still make only one session.
        var racing = await Task.WhenAll(Enumerable.Range(0, 6).Select(_ => embed.PostAsJsonAsync(url, new { workerRef = "r" })));
        var ids = new HashSet<string>();
        foreach (var r in racing) ids.Add((await Api.JsonAsync(r, (int)r.StatusCode))["sessionId"]!.GetValue<string>());
        Assert.Single(ids);
    }

    [Fact]
    public async Task Next_repeats_until_answered_and_teaching_answers_get_feedback()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var a = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        var b = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        Assert.Equal(a.ToJsonString(), b.ToJsonString());
        Assert.Equal("teaching", a["phase"]!.GetValue<string>());
        Assert.Equal(0, a["step"]!.GetValue<int>());
        var item = a["item"]!;
        Assert.Equal(["sound", "defect"], item["labels"]!.AsArray().Select(l => l!.GetValue<string>()));
        var truth = TestApp.TruthOf(item);
        var wrong = truth == "sound" ? "defect" : "sound";
        var feedback = await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
            new { step = 0, itemRef = item["ref"]!.GetValue<string>(), label = wrong }), 200);
        Assert.False(feedback["correct"]!.GetValue<bool>());
        Assert.Equal(truth, feedback["label"]!.GetValue<string>());
        Assert.NotNull(feedback["explanation"]);
        Assert.InRange(feedback["predictedError"]!.GetValue<double>(), 0, 1);
        Assert.Equal(1, feedback["step"]!.GetValue<int>());
    }

    [Fact]
    public async Task Answers_are_retry_safe_and_steps_cannot_be_skipped_or_changed()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var url = $"/api/v1/sessions/{s.SessionId}/answers";
        var next = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        var itemRef = next["item"]!["ref"]!.GetValue<string>();

        var skip = await Api.ProblemAsync(await s.Annotator.PostAsJsonAsync(url, new { step = 1, itemRef, label = "sound" }), 409);
        Assert.Equal(0, skip["currentStep"]!.GetValue<int>());
        await Api.ProblemAsync(await s.Annotator.PostAsJsonAsync(url, new { step = 0, itemRef = "itm_forged", label = "sound" }), 409);
        await Api.ProblemAsync(await s.Annotator.PostAsJsonAsync(url, new { step = 0, itemRef, label = "maybe" }), 422);

        // Eight copies of the same answer at once: one write, eight identical responses.
        var copies = await Task.WhenAll(Enumerable.Range(0, 8).Select(_ => s.Annotator.PostAsJsonAsync(url, new { step = 0, itemRef, label = "sound" })));
        var bodies = new List<string>();
        foreach (var c in copies) bodies.Add((await Api.JsonAsync(c, 200)).ToJsonString());
        Assert.Single(bodies.Distinct());

        var changed = await Api.ProblemAsync(await s.Annotator.PostAsJsonAsync(url, new { step = 0, itemRef, label = "defect" }), 409);
        Assert.Equal(1, changed["currentStep"]!.GetValue<int>());

        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.Equal(1, await db.Events.CountAsync(e => e.SessionId == s.SessionId && e.Type == "answer"));
    }

    [Fact]
    public async Task An_honest_annotator_is_released_with_evidence_and_appears_in_the_feed()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var (final, responses) = await TestApp.RunAsync(s, Honest);
        Assert.Equal("released", final["phase"]!.GetValue<string>());
        // The annotator's token learns the outcome only: no counts that would tell which test answers were wrong.
        Assert.Null(final["evidence"]);
        var annotatorView = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}"), 200);
        Assert.Null(annotatorView["evidence"]);
        Assert.Null(annotatorView["predictedError"]);

        var evidence = (await app.EvidenceAsync(keys, s.SessionId))!;
        Assert.Equal(0, evidence["testErrors"]!.GetValue<int>());
        Assert.True(evidence["testAnswered"]!.GetValue<int>() > 0);
        Assert.True(evidence["itemsTaught"]!.GetValue<int>() > 0);
        Assert.Equal(1, evidence["modelVersion"]!.GetValue<int>());
        Assert.Equal("adaptive", evidence["policy"]!.GetValue<string>());
        Assert.True(evidence["testErrorInterval"]!["high"]!.GetValue<double>() > 0);

        var feed = await Api.JsonAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/releases"), 200);
        Assert.Equal(s.SessionId, feed["releases"]![0]!["sessionId"]!.GetValue<string>());
        var after = feed["next"]!.GetValue<string>();
        var empty = await Api.JsonAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/releases?after={after}"), 200);
        Assert.Empty(empty["releases"]!.AsArray());
        Assert.Equal(after, empty["next"]!.GetValue<string>());
    }

    [Fact]
    public async Task A_failed_then_passed_annotator_is_counted_alike_everywhere()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var project = HookReceiver.ProjectWithHook(receiver.Url, retakes: 1);
        var keys = await app.ReadyProjectAsync(project);
        var s = await app.StartSessionAsync(keys, "second-try");
        var attempt = 0;
        var (final, responses) = await TestApp.RunAsync(s, (item, phase) =>
        {
            if (phase == "teaching") return TestApp.TruthOf(item);
            // Every answer of the first test wrong, every answer of the retake's test right.
            var truth = TestApp.TruthOf(item);
            return attempt == 0 ? (truth == "sound" ? "defect" : "sound") : truth;
        }, onResponse: r => attempt += r["retake"]?.GetValue<bool>() == true ? 1 : 0);
        Assert.Equal("released", final["phase"]!.GetValue<string>());
        Assert.Equal(1, attempt);

        var evidence = (await app.EvidenceAsync(keys, s.SessionId))!;
        var attempts = evidence["attempts"]!.AsArray();
        Assert.Equal(2, attempts.Count);
        Assert.Equal((8, 8, false), (attempts[0]!["answered"]!.GetValue<int>(), attempts[0]!["errors"]!.GetValue<int>(), attempts[0]!["passed"]!.GetValue<bool>()));
        Assert.Equal((8, 0, true), (attempts[1]!["answered"]!.GetValue<int>(), attempts[1]!["errors"]!.GetValue<int>(), attempts[1]!["passed"]!.GetValue<bool>()));
        Assert.Equal(16, evidence["testAnswered"]!.GetValue<int>());
        Assert.Equal(8, evidence["testErrors"]!.GetValue<int>());
        Assert.Equal(1, evidence["retakesUsed"]!.GetValue<int>());
        Assert.Equal(16, responses.Count(r => r["recorded"]?.GetValue<bool>() == true));

        var list = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/sessions"), 200);
        var row = list["sessions"]!.AsArray().Single(x => x!["sessionId"]!.GetValue<string>() == s.SessionId)!;
        Assert.Equal(16, row["testAnswered"]!.GetValue<int>());
        Assert.Equal(evidence.ToJsonString(), row["evidence"]!.ToJsonString());

        var feed = await Api.JsonAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/releases"), 200);
        Assert.Equal(evidence.ToJsonString(), feed["releases"]![0]!["evidence"]!.ToJsonString());

        // The release webhook carries the same evidence.
        Assert.Equal(evidence.ToJsonString(), (await receiver.NextAsync()).Data["evidence"]!.ToJsonString());
    }

    [Fact]
    public async Task A_careless_annotator_fails_and_the_owner_can_list_sessions_by_phase()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var good = await app.StartSessionAsync(keys, "good");
        await TestApp.RunAsync(good, Honest);
        app.Time.Advance(TimeSpan.FromSeconds(1));
        var bad = await app.StartSessionAsync(keys, "bad");
        var (final, _) = await TestApp.RunAsync(bad, (item, phase) =>
            phase == "testing" ? (TestApp.TruthOf(item) == "sound" ? "defect" : "sound") : TestApp.TruthOf(item));
        Assert.Equal("failed", final["phase"]!.GetValue<string>());

        var owner = app.Client(keys.OwnerKey);
        var failed = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/sessions?phase=failed"), 200);
        Assert.Equal("bad", failed["sessions"]!.AsArray().Single()!["workerRef"]!.GetValue<string>());
        var page1 = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/sessions?limit=1"), 200);
        Assert.Equal("good", page1["sessions"]![0]!["workerRef"]!.GetValue<string>());
        var page2 = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/sessions?limit=1&cursor={page1["next"]}"), 200);
        Assert.Equal("bad", page2["sessions"]![0]!["workerRef"]!.GetValue<string>());
        Assert.Null(page2["next"]);
        // A new session for the same worker is allowed once the old one ended.
        await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "bad" }), 201);
    }

    /// <summary>The id of a shown item of <see cref="TestApp.ItemsJsonl"/>: teach "x=N" is tNN, test "x=N.5" is hNN.</summary>
    private static string OwnId(JsonNode item, string phase)
    {
        var x = double.Parse(item["content"]!["text"]!.GetValue<string>()[2..], System.Globalization.CultureInfo.InvariantCulture);
        return (phase == "teaching" ? "t" : "h") + ((int)Math.Floor(x)).ToString("00", System.Globalization.CultureInfo.InvariantCulture);
    }

    [Fact]
    public async Task Test_phase_reveals_no_truth_in_bodies_headers_or_refs()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var other = await app.StartSessionAsync(keys, "other");
        var refs = new HashSet<string>();
        for (var i = 0; i < 200; i++)
        {
            var nextResponse = await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next");
            var next = await Api.JsonAsync(nextResponse, 200);
            if (next["item"] is null) break;
            var phase = next["phase"]!.GetValue<string>();
            var item = next["item"]!;
            var itemRef = item["ref"]!.GetValue<string>();
            Assert.True(refs.Add(itemRef), "item refs never repeat");
            // Refs are opaque per-session tokens: they never carry the item's id (t00…t19, h00…h19 here) in clear.
            // Only this item's own id is checked: any "t" or "h" plus a digit also occurs by chance in a random token.
            Assert.Matches("^itm_[A-Za-z0-9_-]{22}$", itemRef);
            Assert.DoesNotContain(OwnId(item, phase), itemRef[4..7], StringComparison.Ordinal);
            Assert.Null(item["id"]);
            Assert.Null(item["pool"]);
            Assert.Null(item["label"]);
            Assert.Null(item["explanation"]);
            var answer = await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
                new { step = next["step"]!.GetValue<int>(), itemRef, label = "sound" });
            var body = await Api.JsonAsync(answer, 200);
            if (phase == "testing")
            {
                var ended = body["phase"]!.GetValue<string>() is "released" or "failed";
                Assert.True(body["recorded"]!.GetValue<bool>());
                Assert.Null(body["correct"]);
                Assert.Null(body["label"]);
                Assert.Null(body["explanation"]);
                Assert.Null(body["predictedError"]);
                if (!ended)
                {
                    Assert.Null(body["evidence"]);
                    var view = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}"), 200);
                    Assert.Null(view["predictedError"]);
                    Assert.Null(view["evidence"]);
                }
                foreach (var header in answer.Headers.Concat(answer.Content.Headers))
                    Assert.DoesNotContain(header.Key, new[] { "X-Correct", "X-Label" });
            }
        }
        var otherNext = await Api.JsonAsync(await other.Annotator.GetAsync($"/api/v1/sessions/{other.SessionId}/next"), 200);
        Assert.DoesNotContain(otherNext["item"]!["ref"]!.GetValue<string>(), refs);
    }

    [Fact]
    public async Task A_test_item_cannot_be_answered_twice()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        JsonNode next;
        while (true)
        {
            next = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
            if (next["phase"]!.GetValue<string>() == "testing") break;
            await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
                new { step = next["step"]!.GetValue<int>(), itemRef = next["item"]!["ref"]!.GetValue<string>(), label = TestApp.TruthOf(next["item"]!) });
        }
        var step = next["step"]!.GetValue<int>();
        var itemRef = next["item"]!["ref"]!.GetValue<string>();
        await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers", new { step, itemRef, label = "sound" }), 200);
        await Api.ProblemAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers", new { step, itemRef, label = "defect" }), 409);
        var again = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        Assert.NotEqual(itemRef, again["item"]?["ref"]?.GetValue<string>());
    }

    [Fact]
    public async Task A_session_rebuilt_from_its_events_has_the_same_belief()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        for (var i = 0; i < 7; i++)
        {
            var next = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
            var label = i % 3 == 0 ? "sound" : TestApp.TruthOf(next["item"]!);
            await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
                new { step = next["step"]!.GetValue<int>(), itemRef = next["item"]!["ref"]!.GetValue<string>(), label }), 200);
        }
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var session = await db.Sessions.AsNoTracking().SingleAsync(x => x.Id == s.SessionId);
        Assert.True(app.Service<SessionStateCache>().TryGet(s.SessionId, session.Step, out var live));
        var version = await app.Service<ModelVersionCache>().GetAsync(keys.ProjectId, session.ModelVersion, default);
        var rebuilt = await SessionLoader.ReplayAsync(db, version, session, default);
        Assert.Equal(live.Step, rebuilt.Step);
        Assert.Equal(live.CurrentItem, rebuilt.CurrentItem);
        Assert.Equal(live.Phase, rebuilt.Phase);
        Assert.True(live.Belief.SequenceEqual(rebuilt.Belief), "beliefs are bit-identical");
        Assert.Equal(live.PredictedError, rebuilt.PredictedError);

        // And the server itself continues correctly from a cold cache.
        app.Service<SessionStateCache>().Evict(s.SessionId);
        var (final, _) = await TestApp.RunAsync(s, Honest);
        Assert.Contains(final["phase"]!.GetValue<string>(), new[] { "released", "failed" });
    }

    [Fact]
    public async Task A_running_session_continues_unchanged_after_a_restart()
    {
        var dir = TestApp.NewDataDirectory();
        var time = new Microsoft.Extensions.Time.Testing.FakeTimeProvider(new DateTimeOffset(2026, 1, 5, 9, 0, 0, TimeSpan.Zero));
        TestApp.Keys keys;
        string sessionId, token, before;
        using (var app = new TestApp(dataDirectory: dir, time: time))
        {
            keys = await app.ReadyProjectAsync();
            var s = await app.StartSessionAsync(keys);
            (sessionId, token) = (s.SessionId, s.Token);
            for (var i = 0; i < 3; i++)
            {
                var next = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
                await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
                    new { step = next["step"]!.GetValue<int>(), itemRef = next["item"]!["ref"]!.GetValue<string>(), label = "sound" }), 200);
            }
            before = (await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200)).ToJsonString();
        }
        using (var restarted = new TestApp(dataDirectory: dir, time: time))
        {
            var annotator = restarted.Client(token);
            var after = await Api.JsonAsync(await annotator.GetAsync($"/api/v1/sessions/{sessionId}/next"), 200);
            Assert.Equal(before, after.ToJsonString());
            var (final, _) = await TestApp.RunAsync(new TestApp.StartedSession(sessionId, token, annotator), Honest);
            Assert.Contains(final["phase"]!.GetValue<string>(), new[] { "released", "failed" });
        }
        Microsoft.Data.Sqlite.SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    [Fact]
    public async Task Running_sessions_keep_their_model_version()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var old = await app.StartSessionAsync(keys, "early");
        var owner = app.Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(TestApp.Item("extra", "teach", 7.5))), 200);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        var fresh = await app.StartSessionAsync(keys, "late");
        Assert.Equal(1, (await Api.JsonAsync(await old.Annotator.GetAsync($"/api/v1/sessions/{old.SessionId}"), 200))["modelVersion"]!.GetValue<int>());
        Assert.Equal(2, (await Api.JsonAsync(await fresh.Annotator.GetAsync($"/api/v1/sessions/{fresh.SessionId}"), 200))["modelVersion"]!.GetValue<int>());
        await TestApp.RunAsync(old, Honest);
        Assert.Equal(1, (await app.EvidenceAsync(keys, old.SessionId))!["modelVersion"]!.GetValue<int>());
    }

    [Fact]
    public async Task Owner_reads_sessions_of_its_project_only()
    {
        using var app = new TestApp();
        var a = await app.ReadyProjectAsync();
        var b = await app.CreateProjectAsync();
        var s = await app.StartSessionAsync(a);
        await Api.JsonAsync(await app.Client(a.OwnerKey).GetAsync($"/api/v1/sessions/{s.SessionId}"), 200);
        await Api.ProblemAsync(await app.Client(b.OwnerKey).GetAsync($"/api/v1/sessions/{s.SessionId}"), 404);
        await Api.ProblemAsync(await app.Client(a.EmbedKey).GetAsync($"/api/v1/sessions/{s.SessionId}"), 403);
    }
}
