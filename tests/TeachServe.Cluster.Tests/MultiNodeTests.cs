using System.Net.Http.Json;
using System.Text.Json.Nodes;

namespace TeachServe.Cluster.Tests;

/// <summary>Two server processes on one PostgreSQL, with nginx round-robin in front: any node serves any request.</summary>
public sealed class MultiNodeTests
{
    [Fact]
    public async Task Sessions_alternate_between_nodes_and_a_simultaneous_answer_is_applied_once()
    {
        await using var cluster = await Cluster.StartAsync(nodes: 2, front: true);
        HttpClient Node(int i, string? key = null) => cluster.Node(i % 2, key);

        var keys = await Projects.ReadyAsync(Node(0, Cluster.AdminKey), k => Node(1, k));
        var started = await Projects.JsonAsync(await Node(1, keys.EmbedKey)
            .PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w-alternating" }), 201);
        var sessionId = started["sessionId"]!.GetValue<string>();
        var token = started["token"]!.GetValue<string>();

        var steps = 0;
        string phase = "teaching";
        for (var i = 0; i < 100 && phase is "teaching" or "testing"; i++)
        {
            var next = await Projects.JsonAsync(await Node(i, token).GetAsync($"/api/v1/sessions/{sessionId}/next"), 200);
            var item = next["item"]!;
            var answer = new { step = next["step"]!.GetValue<int>(), itemRef = item["ref"]!.GetValue<string>(), label = Projects.TruthOf(item) };
            JsonNode body;
            if (i % 2 == 0)
            {
                // The same answer reaches both nodes at once (a client retrying through another node).
                using var a = Node(0, token);
                using var b = Node(1, token);
                var responses = await Task.WhenAll(
                    a.PostAsJsonAsync($"/api/v1/sessions/{sessionId}/answers", answer),
                    b.PostAsJsonAsync($"/api/v1/sessions/{sessionId}/answers", answer));
                var first = await Projects.JsonAsync(responses[0], 200);
                var second = await Projects.JsonAsync(responses[1], 200);
                Assert.Equal(first.ToJsonString(), second.ToJsonString());
                body = first;
            }
            else
            {
                body = await Projects.JsonAsync(await Node(i + 1, token).PostAsJsonAsync($"/api/v1/sessions/{sessionId}/answers", answer), 200);
            }
            steps++;
            Assert.Equal(steps, body["step"]!.GetValue<int>());
            phase = body["phase"]!.GetValue<string>();
        }
        Assert.Equal("released", phase);

        // Every step was applied exactly once, whichever node took it, and both nodes see the same session.
        var events = (await Node(0, keys.OwnerKey).GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events"))
            .Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => JsonNode.Parse(l)!).ToList();
        var answerSteps = events.Where(e => e["type"]!.GetValue<string>() == "answer").Select(e => e["step"]!.GetValue<int>()).ToList();
        Assert.Equal(Enumerable.Range(0, steps), answerSteps.Order());
        Assert.Single(events, e => e["type"]!.GetValue<string>() == "session.released");
        foreach (var n in new[] { 0, 1 })
        {
            var view = await Projects.JsonAsync(await Node(n, keys.OwnerKey).GetAsync($"/api/v1/sessions/{sessionId}"), 200);
            Assert.Equal(steps, view["step"]!.GetValue<int>());
            Assert.Equal("released", view["phase"]!.GetValue<string>());
        }
        var releases = await Projects.JsonAsync(await Node(1, keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/releases"), 200);
        Assert.Single(releases["releases"]!.AsArray());

        // Through the round-robin front, several annotators at once; each request may land on either node.
        using var front = cluster.FrontClient(keys.EmbedKey);
        var runs = await Task.WhenAll(Enumerable.Range(0, 4).Select(async w =>
        {
            var s = await Projects.JsonAsync(await front.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = $"w-front-{w}" }), 201);
            using var annotator = cluster.FrontClient(s["token"]!.GetValue<string>());
            var id = s["sessionId"]!.GetValue<string>();
            for (var i = 0; i < 100; i++)
            {
                var next = await Projects.JsonAsync(await annotator.GetAsync($"/api/v1/sessions/{id}/next"), 200);
                if (next["item"] is not { } item) return next["phase"]!.GetValue<string>();
                var body = await Projects.JsonAsync(await annotator.PostAsJsonAsync($"/api/v1/sessions/{id}/answers", new
                {
                    step = next["step"]!.GetValue<int>(), itemRef = item["ref"]!.GetValue<string>(), label = Projects.TruthOf(item),
                }), 200);
                if (body["phase"]!.GetValue<string>() is "released" or "failed") return body["phase"]!.GetValue<string>();
            }
            return "unfinished";
        }));
        Assert.All(runs, r => Assert.Equal("released", r));
    }
}
