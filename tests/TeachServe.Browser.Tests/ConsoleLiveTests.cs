using System.Globalization;
using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

/// <summary>
/// The console's live-quality pages in Chromium: annotators released through the session API, live checks posted as
/// a platform does, one annotator answering at random until the drift chart alarms.
/// </summary>
public sealed class ConsoleLiveTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    private static readonly DateTimeOffset Start = new(2026, 3, 2, 9, 0, 0, TimeSpan.Zero);

    private static string Truth(double x) => x < 10 ? "sound" : "defect";

    /// <summary>Items "x=N": sound below 10, defect from 10; teach N = 0..19, test N = 0.5..19.5.</summary>
    private static string Items()
    {
        var lines = new StringBuilder();
        foreach (var (prefix, pool, offset) in new[] { ("t", "teach", 0.0), ("h", "test", 0.5) })
        {
            for (var i = 0; i < 20; i++)
            {
                var x = i + offset;
                lines.Append(JsonSerializer.Serialize(new
                {
                    id = $"{prefix}{i:00}", pool, label = Truth(x), features = new Dictionary<string, double> { ["x"] = x },
                    content = new { text = "x=" + x.ToString(CultureInfo.InvariantCulture) },
                })).Append('\n');
            }
        }
        return lines.ToString();
    }

    private async Task<JsonObject> ProjectAsync()
    {
        using var admin = fixture.Api(BrowserServer.AdminKey);
        var created = await admin.PostAsJsonAsync("/api/v1/projects", new JsonObject
        {
            ["name"] = "Seam check (live)",
            ["labels"] = new JsonArray("sound", "defect"),
            ["family"] = new JsonObject { ["kind"] = "stumps" },
            ["gate"] = new JsonObject
            {
                ["targetError"] = 0.1, ["maxTeachingItems"] = 10, ["retakes"] = 0,
                ["test"] = new JsonObject { ["mode"] = "fixed", ["maxItems"] = 8, ["delta"] = 0.6 },
            },
        });
        Assert.Equal(System.Net.HttpStatusCode.Created, created.StatusCode);
        var keys = (await created.Content.ReadFromJsonAsync<JsonObject>())!;
        using var owner = fixture.Api(keys["ownerKey"]!.GetValue<string>());
        var projectId = keys["projectId"]!.GetValue<string>();
        Assert.True((await owner.PostAsync($"/api/v1/projects/{projectId}/items", new StringContent(Items(), Encoding.UTF8, "application/x-ndjson"))).IsSuccessStatusCode);
        Assert.Equal(System.Net.HttpStatusCode.Created, (await owner.PostAsync($"/api/v1/projects/{projectId}/versions", null)).StatusCode);
        return keys;
    }

    /// <summary>Onboards <paramref name="workerRef"/> through the session API, answering every item right.</summary>
    private Task ReleaseAsync(JsonObject keys, string workerRef) => RunSessionAsync(keys, workerRef, "onboarding", 100);

    /// <summary>Starts a session of <paramref name="purpose"/> and answers up to <paramref name="answers"/> items right; fails the test if it fails.</summary>
    private async Task RunSessionAsync(JsonObject keys, string workerRef, string purpose, int answers)
    {
        using var embed = fixture.Api(keys["embedKey"]!.GetValue<string>());
        var response = await embed.PostAsJsonAsync($"/api/v1/projects/{keys["projectId"]}/sessions", new { workerRef, purpose });
        Assert.True(response.IsSuccessStatusCode, await response.Content.ReadAsStringAsync());
        var started = (await response.Content.ReadFromJsonAsync<JsonObject>())!;
        var sessionId = started["sessionId"]!.GetValue<string>();
        using var annotator = fixture.Api(started["token"]!.GetValue<string>());
        if (answers == 0) return;
        for (var i = 0; i < answers; i++)
        {
            var next = (await annotator.GetFromJsonAsync<JsonObject>($"/api/v1/sessions/{sessionId}/next"))!;
            var item = next["item"]!;
            var x = double.Parse(item["content"]!["text"]!.GetValue<string>()[2..], CultureInfo.InvariantCulture);
            var answer = await annotator.PostAsJsonAsync($"/api/v1/sessions/{sessionId}/answers",
                new { step = next["step"]!.GetValue<int>(), itemRef = item["ref"]!.GetValue<string>(), label = Truth(x) });
            var phase = (await answer.Content.ReadFromJsonAsync<JsonObject>())!["phase"]!.GetValue<string>();
            if (phase == "failed") Assert.Fail($"{workerRef} failed onboarding");
            if (phase == "released") return;
        }
        Assert.Fail($"{workerRef} was not released");
    }

    [Fact]
    public async Task The_live_page_lists_refreshers_with_who_when_how_they_ended_items_taught_and_the_check()
    {
        var keys = await ProjectAsync();
        foreach (var w in new[] { "rider-dee", "rider-eve" }) await ReleaseAsync(keys, w);
        using (var embed = fixture.Api(keys["embedKey"]!.GetValue<string>()))
        {
            // Answered after the release (the server's clock), so they move the belief dee's refresher starts from.
            var after = DateTimeOffset.UtcNow.AddMinutes(1);
            var outcomes = Enumerable.Range(0, 5).Select(n => new
            {
                outcomeId = $"d{n}", workerRef = "rider-dee", itemId = $"t{n:00}", label = Truth(n), answeredAt = after.AddSeconds(n),
            });
            var posted = await embed.PostAsJsonAsync($"/api/v1/projects/{keys["projectId"]}/live-checks", new { outcomes });
            Assert.True(posted.IsSuccessStatusCode, await posted.Content.ReadAsStringAsync());
        }
        // dee takes a refresher and passes its check; eve's is started and left open.
        await RunSessionAsync(keys, "rider-dee", "refresher", 100);
        await RunSessionAsync(keys, "rider-eve", "refresher", 0);

        var page = await fixture.NewPageAsync(1280, 800);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        await page.GetByLabel("Owner key").FillAsync(keys["ownerKey"]!.GetValue<string>());
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GetByRole(AriaRole.Link, new() { Name = "Live quality" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Refreshers" }).WaitForAsync();

        var rows = page.Locator("table.refreshers tbody tr");
        Assert.Equal(2, await rows.CountAsync());
        var dee = await rows.Filter(new() { HasText = "rider-dee" }).Locator("td").AllInnerTextsAsync();
        Assert.StartsWith("ended ", dee[2], StringComparison.Ordinal);
        Assert.DoesNotContain("not updated", dee[2], StringComparison.Ordinal);
        Assert.Matches(@"^\d+ of 10$", dee[3]);
        Assert.Matches(@"^passed [1-9]\d* answered$", dee[4]);
        Assert.Equal("5", dee[5]);
        var eve = await rows.Filter(new() { HasText = "rider-eve" }).Locator("td").AllInnerTextsAsync();
        Assert.Equal("in progress: teaching", eve[2]);
        Assert.Equal("0 of 10", eve[3]);
        Assert.Equal("pending 0 answered", eve[4]);
        Assert.Equal("0", eve[5]);
        // The newest first: eve's was started after dee's had ended.
        Assert.Equal("rider-eve", await rows.First.Locator("td.worker").InnerTextAsync());
        // dee's status after passing: reliable, in the annotators' table above.
        Assert.Equal("reliable", await page.Locator("table.live-quality tbody tr", new() { HasText = "rider-dee" }).Locator("td:nth-child(2)").InnerTextAsync());
        await page.Locator("#refreshers-heading").ScrollIntoViewIfNeededAsync();
        await Browser.ShotAsync(page, "console-24-live-refreshers");

        // The start time links to the refresher's session page.
        await rows.Filter(new() { HasText = "rider-dee" }).Locator("td:nth-child(2) a").ClickAsync();
        await page.WaitForURLAsync("**/console/sessions/**");

        await page.SetViewportSizeAsync(390, 844);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/live");
        Assert.True(await page.EvaluateAsync<bool>("() => document.documentElement.scrollWidth <= window.innerWidth"), "the live page is wider than the phone");
        await page.Locator("#refreshers-heading").ScrollIntoViewIfNeededAsync();
        await Browser.ShotAsync(page, "console-25-phone-live-refreshers");
    }

    [Fact]
    public async Task An_annotator_answering_at_random_alarms_and_the_live_pages_show_it_on_a_desktop_and_a_phone()
    {
        var keys = await ProjectAsync();
        foreach (var w in new[] { "welder-ana", "welder-ben", "welder-cy" }) await ReleaseAsync(keys, w);

        // ben and cy answer right; ana answers at random (seeded) from check 21 on, after 20 right answers.
        var random = new Random(7);
        var outcomes = new List<object>();
        for (var n = 0; n < 60; n++)
        {
            var item = random.Next(20);
            var truth = Truth(item);
            var ana = n < 20 ? truth : (random.Next(2) == 0 ? "sound" : "defect");
            outcomes.Add(new { outcomeId = $"a{n}", workerRef = "welder-ana", itemId = $"t{item:00}", label = ana, answeredAt = Start.AddMinutes(n) });
            outcomes.Add(new { outcomeId = $"b{n}", workerRef = "welder-ben", itemId = $"t{item:00}", label = truth, answeredAt = Start.AddMinutes(n) });
            if (n < 10) outcomes.Add(new { outcomeId = $"c{n}", workerRef = "welder-cy", itemId = $"t{item:00}", label = truth, answeredAt = Start.AddMinutes(n) });
        }
        using (var embed = fixture.Api(keys["embedKey"]!.GetValue<string>()))
        {
            var posted = await embed.PostAsJsonAsync($"/api/v1/projects/{keys["projectId"]}/live-checks", new { outcomes });
            Assert.True(posted.IsSuccessStatusCode, await posted.Content.ReadAsStringAsync());
        }

        var page = await fixture.NewPageAsync(1280, 800);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        await page.GetByLabel("Owner key").FillAsync(keys["ownerKey"]!.GetValue<string>());
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GetByRole(AriaRole.Link, new() { Name = "Live quality" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Live quality" }).WaitForAsync();

        var rows = page.Locator("table.live-quality tbody tr");
        Assert.Equal(3, await rows.CountAsync());
        var first = await rows.First.Locator("td").AllInnerTextsAsync();
        Assert.Equal("welder-ana", first[0]);
        Assert.True(first[1] is "refresher due" or "paused", first[1]);
        Assert.NotEqual("0", first[5]);
        Assert.NotEqual("–", first[6]);
        Assert.Equal(["reliable", "reliable"], (await rows.Locator("td:nth-child(2)").AllInnerTextsAsync()).Skip(1));
        Assert.Equal("2", await page.Locator(".statuses a:has(.live.reliable) strong").InnerTextAsync());
        Assert.Equal("3", await page.Locator(".statuses a[aria-current=page] strong").InnerTextAsync());
        await Browser.ShotAsync(page, "console-20-live-table");

        await page.GetByRole(AriaRole.Link, new() { Name = "welder-ana" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Live error over time" }).WaitForAsync();
        var plot = page.Locator(".live-plot img");
        await plot.ScrollIntoViewIfNeededAsync();
        Assert.True(await plot.EvaluateAsync<bool>("img => img.complete && img.naturalWidth > 0"), "the picture did not load");
        Assert.Contains("drift alarm", await page.Locator(".live-changes").InnerTextAsync(), StringComparison.Ordinal);
        Assert.True(await page.Locator("table.live-outcomes .alarm").CountAsync() >= 1);
        // The model view beside the count view: its figure, whether the views agree, its likely confusions by label name,
        // and the views that caused each status change.
        var modelCard = await page.Locator(".card:has(h2:text-is('Model view'))").InnerTextAsync();
        Assert.Contains("predicted answer error", modelCard, StringComparison.Ordinal);
        Assert.Contains("agree", modelCard, StringComparison.Ordinal);
        var confusions = await page.Locator("table.live-confusions td:nth-child(1)").AllInnerTextsAsync();
        Assert.NotEmpty(confusions);
        Assert.All(confusions, label => Assert.Contains(label, new[] { "sound", "defect" }));
        Assert.Contains("views: ", await page.Locator(".live-changes").InnerTextAsync(), StringComparison.Ordinal);
        await Browser.ShotAsync(page, "console-21-live-annotator");
        await page.Locator(".live-plot").ScreenshotAsync(new() { Path = Path.Combine(Browser.ScreenshotDirectory, "console-21-live-plot.png") });

        // On a phone the tables scroll in their own frames and the picture is the phone one, drawn at its own width.
        await page.SetViewportSizeAsync(390, 844);
        foreach (var (path, shot) in new[] { ("/console/live/welder-ana", "console-22-phone-live-annotator"), ("/console/live", "console-23-phone-live-table") })
        {
            await page.GotoAsync(fixture.Server.BaseUrl + path);
            Assert.True(await page.EvaluateAsync<bool>("() => document.documentElement.scrollWidth <= window.innerWidth"), $"{path} is wider than the phone");
            await Browser.ShotAsync(page, shot);
        }
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/live/welder-ana");
        var phonePlot = page.Locator(".live-plot img");
        Assert.EndsWith("size=phone", await phonePlot.EvaluateAsync<string>("img => img.currentSrc"), StringComparison.Ordinal);
        Assert.True(await phonePlot.EvaluateAsync<bool>("img => img.complete && img.naturalWidth > 0"), "the phone picture did not load");
        await page.Locator(".live-plot").ScreenshotAsync(new() { Path = Path.Combine(Browser.ScreenshotDirectory, "console-22-phone-live-plot.png") });
    }
}
