using System.Net;
using System.Net.Http.Json;
using System.Text.Json.Nodes;

namespace TeachServe.Cluster.Tests;

/// <summary>PostgreSQL stopped under a running node: 503 problem details and /readyz failing, then recovery without a restart.</summary>
public sealed class DatabaseOutageTests
{
    [Fact]
    public async Task A_stopped_database_gives_503_and_the_node_recovers_when_it_returns()
    {
        // A cluster of this test's own, so stopping it disturbs no other test.
        _ = Cluster.Server;
        var pgDir = Path.Combine(Cluster.NewDirectory(), "pg");
        var connection = await Script.RunAsync("pg-cluster.sh", ["start", pgDir], TimeSpan.FromMinutes(2), []);
        try
        {
            await using var cluster = await Cluster.StartAsync(nodes: 1, front: false, connectionString: connection);
            using var node = cluster.Node(0);
            var keys = await Projects.ReadyAsync(cluster.Node(0, Cluster.AdminKey), k => cluster.Node(0, k));
            using var embed = cluster.Node(0, keys.EmbedKey);
            var started = await Projects.JsonAsync(await embed.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w-1" }), 201);
            var sessionId = started["sessionId"]!.GetValue<string>();
            using var annotator = cluster.Node(0, started["token"]!.GetValue<string>());

            await Script.RunAsync("pg-cluster.sh", ["stop", pgDir], TimeSpan.FromMinutes(1), []);

            using (var down = await annotator.GetAsync($"/api/v1/sessions/{sessionId}/next"))
            {
                var text = await down.Content.ReadAsStringAsync();
                Assert.True(down.StatusCode == HttpStatusCode.ServiceUnavailable, $"expected 503, got {(int)down.StatusCode}: {text}");
                Assert.Equal("application/problem+json", down.Content.Headers.ContentType?.MediaType);
                var problem = JsonNode.Parse(text)!;
                Assert.Equal(503, problem["status"]!.GetValue<int>());
                Assert.Equal("Database unavailable", problem["title"]!.GetValue<string>());
                Assert.NotNull(down.Headers.RetryAfter);
            }
            Assert.Equal(HttpStatusCode.ServiceUnavailable, await Cluster.StatusAsync(node, "/readyz"));
            Assert.Equal(HttpStatusCode.OK, await Cluster.StatusAsync(node, "/healthz"));

            await Script.RunAsync("pg-cluster.sh", ["start", pgDir], TimeSpan.FromMinutes(2), []);
            await Cluster.WaitUntilAsync(async () => await Cluster.StatusAsync(node, "/readyz") == HttpStatusCode.OK,
                TimeSpan.FromSeconds(60), "/readyz after PostgreSQL returned");

            // The same process carries on with the session it served before the outage.
            var next = await Projects.JsonAsync(await annotator.GetAsync($"/api/v1/sessions/{sessionId}/next"), 200);
            var item = next["item"]!;
            var answered = await Projects.JsonAsync(await annotator.PostAsJsonAsync($"/api/v1/sessions/{sessionId}/answers", new
            {
                step = next["step"]!.GetValue<int>(), itemRef = item["ref"]!.GetValue<string>(), label = Projects.TruthOf(item),
            }), 200);
            Assert.Equal(1, answered["step"]!.GetValue<int>());
        }
        finally
        {
            await Script.RunAsync("pg-cluster.sh", ["destroy", pgDir], TimeSpan.FromMinutes(1), []);
            Directory.Delete(Path.GetDirectoryName(pgDir)!, recursive: true);
        }
    }
}
