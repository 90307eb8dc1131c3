using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;

namespace TeachServe.Cluster.Tests;

/// <summary>The small project of the server tests: items "x=N", sound below 10, defect otherwise.</summary>
public static class Projects
{
    public sealed record Keys(string ProjectId, string OwnerKey, string EmbedKey);

    public static async Task<Keys> ReadyAsync(HttpClient admin, Func<string, HttpClient> withKey)
    {
        var project = new JsonObject
        {
            ["name"] = "Seam check",
            ["labels"] = new JsonArray("sound", "defect"),
            ["family"] = new JsonObject { ["kind"] = "stumps" },
            ["policy"] = "adaptive",
            ["gate"] = new JsonObject
            {
                ["targetError"] = 0.1, ["confidence"] = 0.8, ["maxTeachingItems"] = 10, ["retakes"] = 0,
                ["test"] = new JsonObject { ["mode"] = "fixed", ["maxItems"] = 8, ["delta"] = 0.6 },
            },
        };
        var created = await JsonAsync(await admin.PostAsJsonAsync("/api/v1/projects", project), 201);
        var keys = new Keys(created["projectId"]!.GetValue<string>(), created["ownerKey"]!.GetValue<string>(), created["embedKey"]!.GetValue<string>());
        var owner = withKey(keys.OwnerKey);
        await JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items",
            new StringContent(Items(), Encoding.UTF8, "application/x-ndjson")), 200);
        await JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        return keys;
    }

    private static string Items()
    {
        var lines = new StringBuilder();
        for (var i = 0; i < 20; i++) lines.Append(Item($"t{i:00}", "teach", i)).Append('\n');
        for (var i = 0; i < 20; i++) lines.Append(Item($"h{i:00}", "test", i + 0.5)).Append('\n');
        return lines.ToString();
    }

    private static string Item(string id, string pool, double x) => JsonSerializer.Serialize(new
    {
        id, pool, label = x < 10 ? "sound" : "defect", features = new Dictionary<string, double> { ["x"] = x },
        content = new { text = $"x={x.ToString(System.Globalization.CultureInfo.InvariantCulture)}" },
    });

    public static string TruthOf(JsonNode item) =>
        double.Parse(item["content"]!["text"]!.GetValue<string>()[2..], System.Globalization.CultureInfo.InvariantCulture) < 10
            ? "sound" : "defect";

    public static async Task<JsonNode> JsonAsync(HttpResponseMessage response, int expectedStatus)
    {
        var text = await response.Content.ReadAsStringAsync();
        Assert.True((int)response.StatusCode == expectedStatus, $"expected {expectedStatus}, got {(int)response.StatusCode}: {text}");
        return JsonNode.Parse(text)!;
    }
}
