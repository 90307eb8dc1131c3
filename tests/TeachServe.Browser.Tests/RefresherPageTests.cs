using System.Net.Http.Json;
using System.Text.Json.Nodes;

namespace TeachServe.Browser.Tests;

/// <summary>A refresher runs on the same annotator page as onboarding: its launch link, its own teaching budget, and the monitor's status after.</summary>
public sealed class RefresherPageTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    [Fact]
    public async Task A_drifted_annotator_takes_a_refresher_on_the_annotator_page_and_is_reliable_again()
    {
        const string worker = "refresher-annotator";
        var (sessionId, link) = await fixture.StartSessionAsync(worker);
        var page = await fixture.NewPageAsync(390, 844);
        await page.GotoAsync(link);
        var onboarding = new Annotator(page, page.MainFrame);
        await onboarding.OpenAsync();
        await onboarding.RunToEndAsync(keyboard: false);
        Assert.Equal("released", (await fixture.AnswersAsync(sessionId)).Phase);

        // The worker's onboarding answers give item ids with their labels; live checks then report another label for each.
        using var owner = fixture.Api(fixture.OwnerKey);
        var events = (await owner.GetStringAsync($"/api/v1/projects/{fixture.ProjectId}/events"))
            .Split('\n', StringSplitOptions.RemoveEmptyEntries).Select(l => JsonNode.Parse(l)!)
            .Where(e => e["type"]!.GetValue<string>() == "answer" && e["sessionId"]?.GetValue<string>() == sessionId)
            .Select(e => JsonNode.Parse(e["data"]!.ToJsonString())!)
            .ToList();
        var labels = (await owner.GetFromJsonAsync<JsonObject>($"/api/v1/projects/{fixture.ProjectId}"))!["settings"]!["labels"]!
            .AsArray().Select(l => l!.GetValue<string>()).ToList();
        var known = events.Where(d => d["correct"]!.GetValue<bool>())
            .Select(d => (Item: d["itemId"]!.GetValue<string>(), Label: d["label"]!.GetValue<string>())).Distinct().ToList();
        Assert.NotEmpty(known);

        using var embed = fixture.Api(fixture.EmbedKey);
        var at = new DateTimeOffset(2026, 12, 1, 9, 0, 0, TimeSpan.Zero);
        var status = "reliable";
        // One outcome per batch, so the first alarm is seen before a second one would pause the annotator.
        for (var n = 0; n < 200 && status is "reliable" or "watch"; n++)
        {
            var outcomes = Enumerable.Range(n, 1).Select(k =>
            {
                var (item, label) = known[k % known.Count];
                return (object)new { outcomeId = $"gold-{k}", workerRef = worker, itemId = item, label = labels.First(l => l != label), answeredAt = at.AddMinutes(k) };
            }).ToArray();
            var stored = await embed.PostAsJsonAsync($"/api/v1/projects/{fixture.ProjectId}/live-checks", new { outcomes });
            Assert.True(stored.IsSuccessStatusCode, await stored.Content.ReadAsStringAsync());
            status = (await stored.Content.ReadFromJsonAsync<JsonObject>())!["annotators"]![0]!["status"]!.GetValue<string>();
        }
        Assert.Equal("refresher-due", status);

        var started = await embed.PostAsJsonAsync($"/api/v1/projects/{fixture.ProjectId}/sessions", new { workerRef = worker, purpose = "refresher" });
        Assert.Equal(System.Net.HttpStatusCode.Created, started.StatusCode);
        var refresherLink = (await started.Content.ReadFromJsonAsync<JsonObject>())!["launchUrl"]!.GetValue<string>();

        var refresherPage = await fixture.NewPageAsync(390, 844);
        await refresherPage.GotoAsync(refresherLink);
        var refresher = new Annotator(refresherPage, refresherPage.MainFrame);
        await refresher.OpenAsync();
        Assert.EndsWith("· refresher", await refresherPage.Locator("#project-name").InnerTextAsync(), StringComparison.Ordinal);
        Assert.Contains("of at most 10", await refresherPage.Locator("#progress-phase").InnerTextAsync(), StringComparison.Ordinal);
        await Browser.ShotAsync(refresherPage, "annotate-20-refresher-item-phone");
        await refresher.RunToEndAsync(keyboard: false);
        await Browser.ShotAsync(refresherPage, "annotate-21-refresher-passed-phone");
        Assert.Equal("Refresher passed: you are back to live work.", await refresherPage.Locator("#end-heading").InnerTextAsync());

        var live = (await owner.GetFromJsonAsync<JsonObject>($"/api/v1/projects/{fixture.ProjectId}/live-quality/{worker}"))!;
        Assert.Equal("reliable", live["annotator"]!["status"]!.GetValue<string>());
    }
}
