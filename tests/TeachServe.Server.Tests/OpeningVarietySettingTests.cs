using System.Net.Http.Json;
using System.Text.Json.Nodes;

namespace TeachServe.Server.Tests;

/// <summary>gate.openingVariety: the project's value is what a new session starts with and keeps in its start event.</summary>
public sealed class OpeningVarietySettingTests
{
    private static async Task<int> StartedWithAsync(TestApp app, TestApp.Keys keys, string sessionId)
    {
        var text = await app.Client(keys.OwnerKey).GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events");
        var start = text.Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => JsonNode.Parse(l)!)
            .Single(e => e["type"]!.GetValue<string>() == "session.started" && e["sessionId"]!.GetValue<string>() == sessionId);
        return start["data"]!["openingVariety"]!.GetValue<int>();
    }

    [Theory]
    [InlineData(null, 3)]
    [InlineData(0, 0)]
    [InlineData(7, 7)]
    public async Task A_new_session_starts_with_the_projects_opening_variety(int? setting, int expected)
    {
        using var app = new TestApp();
        var project = TestApp.ProjectJson();
        if (setting is { } items)
        {
            project["gate"]!["openingVariety"] = items;
        }

        var keys = await app.ReadyProjectAsync(project);
        var session = await app.StartSessionAsync(keys, "opener");
        Assert.Equal(expected, await StartedWithAsync(app, keys, session.SessionId));
    }

    [Theory]
    [InlineData(-1)]
    [InlineData(11)]
    public async Task An_opening_variety_out_of_range_is_422_at_its_field(int items)
    {
        using var app = new TestApp();
        var project = TestApp.ProjectJson();
        project["gate"]!["openingVariety"] = items;
        var problem = await Api.ProblemAsync(await app.Client(TestApp.AdminKey).PostAsJsonAsync("/api/v1/projects", project), 422);
        var fields = problem["errors"]!.AsArray().Select(e => e!["field"]!.GetValue<string>()).ToList();
        Assert.Equal(["gate.openingVariety"], fields);
    }
}
