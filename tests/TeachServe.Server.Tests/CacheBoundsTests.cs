using System.Net.Http.Json;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Tests;

/// <summary>The per-node caches stay within their configured bounds, and whatever they drop is rebuilt from the database.</summary>
public sealed class CacheBoundsTests
{
    [Fact]
    public async Task The_model_version_cache_never_holds_more_than_its_bound_and_reloads_an_evicted_version()
    {
        using var app = new TestApp(new() { ["TeachServe:Cache:MaxModelVersions"] = "2" });
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var cache = app.Service<ModelVersionCache>();
        Assert.Equal(2, cache.Capacity);
        // Pinned to version 1 before later versions push it out of the cache.
        var pinned = await app.StartSessionAsync(keys, "pinned-to-1");

        for (var n = 1; n <= 5; n++)
        {
            var item = TestApp.Item($"t-extra{n:00}", "teach", 0.25 + n * 0.5) + "\n";
            await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(item)), 200);
            await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
            Assert.InRange(cache.Count, 1, 2);
        }
        Assert.False(cache.Contains(keys.ProjectId, 1));
        Assert.True(cache.Contains(keys.ProjectId, 6));

        var next = await Api.JsonAsync(await pinned.Annotator.GetAsync($"/api/v1/sessions/{pinned.SessionId}/next"), 200);
        Assert.NotNull(next["item"]);
        Assert.True(cache.Contains(keys.ProjectId, 1));
        Assert.InRange(cache.Count, 1, 2);
    }

    [Fact]
    public async Task The_session_state_cache_is_bounded_drops_ended_sessions_and_replays_evicted_ones()
    {
        using var app = new TestApp(new() { ["TeachServe:Cache:MaxSessionStates"] = "3" });
        var keys = await app.ReadyProjectAsync();
        var states = app.Service<SessionStateCache>();
        var sessions = new List<TestApp.StartedSession>();
        for (var i = 0; i < 8; i++)
        {
            var s = await app.StartSessionAsync(keys, $"worker-{i}");
            sessions.Add(s);
            await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
            Assert.InRange(states.Count, 1, 3);
        }
        Assert.False(states.Contains(sessions[0].SessionId));

        // The first session was evicted long ago: it is replayed from its events and runs to its end.
        var (final, responses) = await TestApp.RunAsync(sessions[0], (item, _) => TestApp.TruthOf(item));
        Assert.Contains(final["phase"]!.GetValue<string>(), new[] { "released", "failed" });
        Assert.NotEmpty(responses);
        Assert.False(states.Contains(sessions[0].SessionId));
        Assert.InRange(states.Count, 0, 3);

        // A running session answered on this node is held again.
        var last = sessions[^1];
        var step = await Api.JsonAsync(await last.Annotator.GetAsync($"/api/v1/sessions/{last.SessionId}/next"), 200);
        await Api.JsonAsync(await last.Annotator.PostAsJsonAsync($"/api/v1/sessions/{last.SessionId}/answers", new
        {
            step = step["step"]!.GetValue<int>(),
            itemRef = step["item"]!["ref"]!.GetValue<string>(),
            label = TestApp.TruthOf(step["item"]!),
        }), 200);
        Assert.True(states.Contains(last.SessionId));
        Assert.InRange(states.Count, 1, 3);
    }

    [Fact]
    public void The_least_recently_used_entry_leaves_first()
    {
        var index = new Infrastructure.LruIndex<int, string>(3);
        index.Set(1, "a");
        index.Set(2, "b");
        index.Set(3, "c");
        Assert.True(index.TryGet(1, out _)); // 1 is now the most recently used
        index.Set(4, "d");
        Assert.False(index.TryPeek(2, out _));
        Assert.True(index.TryPeek(1, out _));
        Assert.Equal(3, index.Count);
        // Peeking does not count as a use: 3 is the oldest now and leaves next.
        Assert.True(index.TryPeek(3, out _));
        index.Set(5, "e");
        Assert.False(index.TryPeek(3, out _));
        Assert.False(index.Remove(1, "other"));
        Assert.True(index.Remove(1, "a"));
        Assert.Equal(2, index.Count);
    }
}
