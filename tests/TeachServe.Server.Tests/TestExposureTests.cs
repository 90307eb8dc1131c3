using System.Net.Http.Json;
using System.Text.Json.Nodes;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Tests;

/// <summary>Exposure of test items across sessions: the counts, the owner's report, and Sympson–Hetter K at session start.</summary>
public sealed class TestExposureTests
{
    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    private static string WrongInTest(JsonNode item, string phase)
    {
        var truth = TestApp.TruthOf(item);
        return phase == "testing" ? (truth == "sound" ? "defect" : "sound") : truth;
    }

    private static async Task<List<JsonNode>> EventsAsync(TestApp app, TestApp.Keys keys)
    {
        var text = await app.Client(keys.OwnerKey).GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events");
        return text.Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => JsonNode.Parse(l)!).ToList();
    }

    private static async Task<JsonNode> ReportAsync(TestApp app, TestApp.Keys keys) =>
        await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/test-exposure"), 200);

    [Fact]
    public async Task The_report_counts_each_test_item_once_per_session_that_was_shown_it()
    {
        using var app = new TestApp();
        // 12 test items for two attempts of 8: the retake of the failing worker must reuse four of them.
        var keys = await app.ReadyProjectAsync(TestApp.ProjectJson(testItems: 8, retakes: 1), TestApp.ItemsJsonl(20, 12));
        var (failed, _) = await TestApp.RunAsync(await app.StartSessionAsync(keys, "fails"), WrongInTest);
        Assert.Equal("failed", failed["phase"]!.GetValue<string>());
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "passes"), Honest);
        await app.StartSessionAsync(keys, "never-tested");

        // The expected counts, from the event log: distinct test items answered per session.
        var perSession = (await EventsAsync(app, keys))
            .Where(e => e["type"]!.GetValue<string>() == "answer" && e["data"]!["phase"]!.GetValue<string>() == "testing")
            .GroupBy(e => e["sessionId"]!.GetValue<string>())
            .ToDictionary(g => g.Key, g => g.Select(e => e["data"]!["itemId"]!.GetValue<string>()).ToList());
        Assert.Equal(2, perSession.Count);
        Assert.Contains(perSession.Values, items => items.Count > items.Distinct().Count());
        var expected = perSession.Values.SelectMany(items => items.Distinct()).GroupBy(id => id).ToDictionary(g => g.Key, g => g.Count());

        var report = await ReportAsync(app, keys);
        Assert.Equal(2, report["testedSessions"]!.GetValue<int>());
        Assert.Equal(1.0, report["maxExposure"]!.GetValue<double>());
        var items = report["items"]!.AsArray();
        Assert.Equal(12, items.Count);
        foreach (var item in items)
        {
            var id = item!["itemId"]!.GetValue<string>();
            var sessions = expected.GetValueOrDefault(id);
            Assert.Equal(sessions, item["sessions"]!.GetValue<int>());
            Assert.Equal(sessions / 2.0, item["rate"]!.GetValue<double>());
            Assert.Equal(1.0, item["administrationProbability"]!.GetValue<double>());
        }

        Assert.Equal(items.Select(i => i!["sessions"]!.GetValue<int>()).OrderDescending(), items.Select(i => i!["sessions"]!.GetValue<int>()));
        await Api.ProblemAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/test-exposure"), 403);
        var other = await app.CreateProjectAsync();
        await Api.ProblemAsync(await app.Client(other.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/test-exposure"), 404);
    }

    [Fact]
    public async Task A_session_starts_with_K_below_one_for_items_over_the_target_and_replays_with_it()
    {
        using var app = new TestApp();
        var project = TestApp.ProjectJson(testItems: 8);
        project["gate"]!["test"]!["maxExposure"] = 0.25;
        var keys = await app.ReadyProjectAsync(project);
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "first"), Honest);
        var firstItems = (await EventsAsync(app, keys))
            .Where(e => e["type"]!.GetValue<string>() == "answer" && e["data"]!["phase"]!.GetValue<string>() == "testing")
            .Select(e => e["data"]!["itemId"]!.GetValue<string>()).ToHashSet();
        Assert.Equal(8, firstItems.Count);

        // One tested session, each of its items shown to all of it: rate 1, so K = 0.25 / 1; other items keep K = 1.
        var second = await app.StartSessionAsync(keys, "second");
        var start = (await EventsAsync(app, keys)).Single(e => e["type"]!.GetValue<string>() == "session.started" && e["sessionId"]!.GetValue<string>() == second.SessionId);
        var stored = start["data"]!["testAdministration"]!.AsObject();
        Assert.Equal(firstItems.Order(), stored.Select(p => p.Key).Order());
        Assert.All(stored, p => Assert.Equal(0.25, p.Value!.GetValue<double>()));
        var report = await ReportAsync(app, keys);
        Assert.Equal(0.25, report["maxExposure"]!.GetValue<double>());
        Assert.All(report["items"]!.AsArray(), i => Assert.Equal(
            firstItems.Contains(i!["itemId"]!.GetValue<string>()) ? 0.25 : 1.0, i["administrationProbability"]!.GetValue<double>()));

        // Into the test, then the node forgets the session: rebuilt from its events and its stored K, it serves the same item.
        var url = $"/api/v1/sessions/{second.SessionId}";
        var testAnswers = 0;
        JsonNode next;
        while (true)
        {
            next = await Api.JsonAsync(await second.Annotator.GetAsync($"{url}/next"), 200);
            if (next["phase"]!.GetValue<string>() == "testing" && ++testAnswers > 3) break;
            await Api.JsonAsync(await second.Annotator.PostAsJsonAsync($"{url}/answers", new
            {
                step = next["step"]!.GetValue<int>(), itemRef = next["item"]!["ref"]!.GetValue<string>(), label = Honest(next["item"]!, ""),
            }), 200);
        }

        app.Service<SessionStateCache>().Evict(second.SessionId);
        var replayed = await Api.JsonAsync(await second.Annotator.GetAsync($"{url}/next"), 200);
        Assert.Equal(next.ToJsonString(), replayed.ToJsonString());
    }

    [Theory]
    [InlineData(0.0)]
    [InlineData(-0.1)]
    [InlineData(1.5)]
    public async Task An_exposure_target_outside_zero_to_one_is_422_naming_the_field(double target)
    {
        using var app = new TestApp();
        var project = TestApp.ProjectJson();
        project["gate"]!["test"]!["maxExposure"] = target;
        var problem = await Api.ProblemAsync(await app.Client(TestApp.AdminKey).PostAsJsonAsync("/api/v1/projects", project), 422);
        Assert.Contains("gate.test.maxExposure", problem["errors"]!.AsArray().Select(e => e!["field"]!.GetValue<string>()));
    }
}
