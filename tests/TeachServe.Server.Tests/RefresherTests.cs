using System.Net.Http.Json;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Tests;

/// <summary>Refresher sessions of released annotators over HTTP: start, teaching from the live belief, replay, and the monitor's status after.</summary>
public sealed class RefresherTests
{
    private static readonly DateTimeOffset Start = new(2026, 3, 1, 8, 0, 0, TimeSpan.Zero);

    /// <summary>The worker has drifted to "defect" for everything; live checks on teach items t00..t19 (x = 0..19) until the monitor calls for a refresher.</summary>
    private static async Task DriftUntilDueAsync(TestApp app, TestApp.Keys keys, string workerRef)
    {
        for (var batch = 0; batch < 20; batch++)
        {
            var outcomes = Enumerable.Range(0, 5).Select(k =>
            {
                var n = (batch * 5) + k;
                var item = (n * 7) % 20;
                return (object)new { outcomeId = $"{workerRef}-{n}", workerRef, itemId = $"t{item:00}", label = "defect", answeredAt = Start.AddMinutes(n) };
            }).ToArray();
            var stored = await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/live-checks", new { outcomes }), 200);
            if (stored["annotators"]![0]!["status"]!.GetValue<string>() == "refresher-due") return;
        }
        Assert.Fail("The monitor never called for a refresher.");
    }

    private static async Task<(JsonNode Body, TestApp.StartedSession? Session)> StartRefresherAsync(TestApp app, TestApp.Keys keys, string workerRef, int status = 201)
    {
        var response = await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef, purpose = "refresher" });
        if (status != 201) return (await Api.ProblemAsync(response, status), null);
        var body = await Api.JsonAsync(response, 201);
        var token = body["token"]!.GetValue<string>();
        return (body, new TestApp.StartedSession(body["sessionId"]!.GetValue<string>(), token, app.Client(token)));
    }

    private static async Task<string> StatusAsync(TestApp app, TestApp.Keys keys, string workerRef) =>
        (await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality/{workerRef}"), 200))
        ["annotator"]!["status"]!.GetValue<string>();

    [Fact]
    public async Task A_passed_refresher_teaches_the_drifted_mistakes_and_makes_the_annotator_reliable_again()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w1");
        await DriftUntilDueAsync(app, keys, "w1");

        var (started, session) = await StartRefresherAsync(app, keys, "w1");
        Assert.Equal(1, started["modelVersion"]!.GetValue<int>());
        var view = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/sessions/{session!.SessionId}"), 200);
        Assert.Equal("refresher", view["purpose"]!.GetValue<string>());
        Assert.Equal("adaptive", view["policy"]!.GetValue<string>());

        var (final, _) = await TestApp.RunAsync(session, (item, _) => TestApp.TruthOf(item));
        Assert.Equal("released", final["phase"]!.GetValue<string>());
        var ended = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/sessions/{session.SessionId}"), 200);
        Assert.InRange(ended["itemsTaught"]!.GetValue<int>(), 1, 10);
        Assert.Equal("reliable", await StatusAsync(app, keys, "w1"));

        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var types = await db.Events.AsNoTracking().Where(e => e.SessionId == session.SessionId).Select(e => e.Type).ToListAsync();
        Assert.Contains("refresher.passed", types);
        Assert.DoesNotContain("session.released", types);
        var change = await db.Events.AsNoTracking().Where(e => e.SessionId == session.SessionId && e.Type == "live.status").SingleAsync();
        var data = JsonNode.Parse(change.DataJson)!;
        Assert.Equal("refresher-due", data["from"]!.GetValue<string>());
        Assert.Equal("reliable", data["to"]!.GetValue<string>());
        // A refresher is not a new release.
        Assert.Equal(1, await db.Releases.CountAsync(r => r.WorkerRef == "w1"));
        var startRow = await db.RefresherStarts.AsNoTracking().SingleAsync(r => r.SessionId == session.SessionId);
        Assert.True(startRow.LiveChecks > 0);
        // The refresher starts from the release's belief moved by the wrong live checks: it predicts more error than
        // the release did (which items it then teaches depends on the release's random test and teaching order).
        var released = await db.Sessions.AsNoTracking().SingleAsync(s => s.WorkerRef == "w1" && s.Purpose == SessionPurposes.Onboarding);
        Assert.Equal(released.Id, startRow.FromSessionId);
        var startData = JsonNode.Parse((await db.Events.AsNoTracking()
            .SingleAsync(e => e.SessionId == session.SessionId && e.Type == "session.started")).DataJson)!;
        // Since the model view forgets towards the prior between checks, whether the start predicts more error than the
        // release depends on the release's (randomly seeded) belief; that it moved is what holds for every seed.
        Assert.NotEqual(released.PredictedError, startData["predictedError"]!.GetValue<double>());
    }

    [Fact]
    public async Task A_failed_refresher_pauses_the_annotator()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w2");
        await DriftUntilDueAsync(app, keys, "w2");

        var (_, session) = await StartRefresherAsync(app, keys, "w2");
        // Every answer wrong, so the check fails whatever items it draws.
        var (final, _) = await TestApp.RunAsync(session!, (item, _) => TestApp.TruthOf(item) == "sound" ? "defect" : "sound");
        Assert.Equal("failed", final["phase"]!.GetValue<string>());
        Assert.Equal("paused", await StatusAsync(app, keys, "w2"));

        // Paused stays paused under good live checks; only a passed refresher clears it.
        var outcomes = Enumerable.Range(0, 10).Select(n => (object)new
        {
            outcomeId = $"good-{n}", workerRef = "w2", itemId = $"t{n * 2:00}", label = TestApp.TruthOf(n * 2), answeredAt = Start.AddDays(1).AddMinutes(n),
        }).ToArray();
        await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/live-checks", new { outcomes }), 200);
        Assert.Equal("paused", await StatusAsync(app, keys, "w2"));

        var (_, again) = await StartRefresherAsync(app, keys, "w2");
        var (passed, _) = await TestApp.RunAsync(again!, (item, _) => TestApp.TruthOf(item));
        Assert.Equal("released", passed["phase"]!.GetValue<string>());
        Assert.Equal("reliable", await StatusAsync(app, keys, "w2"));
    }

    [Fact]
    public async Task A_refresher_replayed_from_its_events_shows_the_same_item()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w3");
        await DriftUntilDueAsync(app, keys, "w3");
        var (_, session) = await StartRefresherAsync(app, keys, "w3");

        for (var step = 0; step < 2; step++)
        {
            var next = await Api.JsonAsync(await session!.Annotator.GetAsync($"/api/v1/sessions/{session.SessionId}/next"), 200);
            await Api.JsonAsync(await session.Annotator.PostAsJsonAsync($"/api/v1/sessions/{session.SessionId}/answers", new
            {
                step, itemRef = next["item"]!["ref"]!.GetValue<string>(), label = TestApp.TruthOf(next["item"]!),
            }), 200);
        }
        var before = await Api.JsonAsync(await session!.Annotator.GetAsync($"/api/v1/sessions/{session.SessionId}/next"), 200);
        // Drop this node's engine state: the next request replays the session from its events and its stored start.
        app.Services.GetRequiredService<SessionStateCache>().Evict(session.SessionId);
        var after = await Api.JsonAsync(await session.Annotator.GetAsync($"/api/v1/sessions/{session.SessionId}/next"), 200);
        Assert.Equal(before["item"]!["ref"]!.GetValue<string>(), after["item"]!["ref"]!.GetValue<string>());
        Assert.Equal(before["phase"]!.GetValue<string>(), after["phase"]!.GetValue<string>());
    }

    [Fact]
    public async Task A_refresher_is_refused_for_a_worker_never_released_and_an_unknown_purpose_is_refused()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var (problem, _) = await StartRefresherAsync(app, keys, "newcomer", 409);
        Assert.Contains("not been released", problem["detail"]!.GetValue<string>());

        var bad = await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w", purpose = "review" });
        var invalid = await Api.ProblemAsync(bad, 422);
        Assert.Contains("purpose", invalid["detail"]!.GetValue<string>());

        using var scope = app.Services.CreateScope();
        Assert.Equal(0, await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Sessions.CountAsync());
    }

    [Fact]
    public async Task Erasing_a_worker_removes_their_refresher_starts()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w4");
        await DriftUntilDueAsync(app, keys, "w4");
        await StartRefresherAsync(app, keys, "w4");

        await Api.JsonAsync(await app.Client(keys.OwnerKey).DeleteAsync($"/api/v1/projects/{keys.ProjectId}/workers/w4"), 200);
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.Equal(0, await db.RefresherStarts.CountAsync());
        Assert.Equal(0, await db.Sessions.CountAsync());
    }
}
