using System.Net;
using System.Text;
using System.Text.Json.Nodes;
using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

/// <summary>
/// The owner's instructions and label guidance: written in Markdown through the API, shown before the first teaching
/// item, re-opened from any screen, and rendered without anything the owner's text could run or load.
/// A server of its own, because the test rewrites the demo project's guidance.
/// </summary>
public sealed class GuidanceTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    private const string Instructions = """
        ## Before you start

        Look at **three things** in every drawing:

        1. the number of spots,
        2. the colour of the leaf,
        3. the size of the spots on the scale bar.

        <script>window.guidanceScriptRan = true;</script>
        <img src="x" onerror="window.guidanceScriptRan = true">
        [Bad link](javascript:window.guidanceScriptRan=true) and [the full guide](https://guide.example.org/leaves).
        ![a remote picture](https://pictures.example.org/leaf.png)
        """;

    [Fact]
    public async Task Instructions_come_before_the_first_item_reopen_from_feedback_and_carry_nothing_that_runs()
    {
        using var owner = fixture.Api(fixture.OwnerKey);
        var patch = new JsonObject
        {
            ["guidance"] = new JsonObject
            {
                ["instructions"] = Instructions,
                ["labels"] = new JsonObject { ["healthy"] = "A *green* leaf with few marks.", ["fungal-spots"] = "Many brown spots with pale rims.",
                    // Merge patch: null removes the demo's own guidance for this label.
                    ["nutrient-deficiency"] = null },
            },
        };
        using (var response = await owner.PatchAsync($"/api/v1/projects/{fixture.ProjectId}",
                   new StringContent(patch.ToJsonString(), Encoding.UTF8, "application/merge-patch+json")))
            Assert.Equal(HttpStatusCode.OK, response.StatusCode);

        // Guidance for a label the project does not have is refused, naming the field.
        var unknown = new JsonObject { ["guidance"] = new JsonObject { ["labels"] = new JsonObject { ["maybe"] = "?" } } };
        using (var refused = await owner.PatchAsync($"/api/v1/projects/{fixture.ProjectId}",
                   new StringContent(unknown.ToJsonString(), Encoding.UTF8, "application/merge-patch+json")))
        {
            Assert.Equal(HttpStatusCode.UnprocessableEntity, refused.StatusCode);
            Assert.Contains("guidance.labels.maybe", await refused.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        }

        var (_, link) = await fixture.StartSessionAsync("instructed-annotator");
        var page = await fixture.NewPageAsync();
        await page.GotoAsync(link);
        var annotator = new Annotator(page, page.MainFrame);
        Assert.Equal("guide", (await annotator.NextScreenAsync()).View);
        var guide = page.Locator("#view-guide");
        Assert.Equal("Before you start", await guide.Locator("h2").First.InnerTextAsync());
        Assert.Equal("three things", await guide.Locator("strong").First.InnerTextAsync());
        Assert.Equal(3, await guide.Locator("#guide-instructions ol li").CountAsync());
        Assert.Equal("green", await guide.Locator("dd em").InnerTextAsync());
        Assert.Equal(["healthy", "fungal-spots"], await guide.Locator("dt").AllInnerTextsAsync());

        // The owner's HTML is shown as text, never run; the javascript: link and the picture keep only their words.
        Assert.Equal(0, await guide.Locator("script, img, iframe").CountAsync());
        Assert.Contains("<script>", await guide.InnerTextAsync(), StringComparison.Ordinal);
        Assert.False(await page.EvaluateAsync<bool>("() => window.guidanceScriptRan === true"));
        Assert.Equal(["https://guide.example.org/leaves"], await guide.Locator("a").EvaluateAllAsync<string[]>("as => as.map(a => a.href)"));
        Assert.Equal("noopener noreferrer nofollow", await guide.Locator("a").GetAttributeAsync("rel"));
        Assert.Contains("a remote picture", await guide.InnerTextAsync(), StringComparison.Ordinal);
        await Browser.ShotAsync(page, "annotate-00-instructions");

        // Start: the first teaching item; the instructions stay one click away.
        await annotator.ContinueAsync(keyboard: false);
        Assert.Equal(("item", 0), annotator.Screen);
        Assert.True(await page.Locator("#guide-open").IsVisibleAsync());

        // Re-opened from the feedback screen, they lead back to the same feedback.
        await annotator.AnswerAsync(keyboard: false, correct: false);
        Assert.Equal("feedback", annotator.Screen.View);
        var verdict = await page.Locator("#verdict").InnerTextAsync();
        await page.Locator("#guide-open").ClickAsync();
        Assert.Equal("guide", (await annotator.NextScreenAsync()).View);
        Assert.Equal("Back to the item", await page.Locator("#guide-close").InnerTextAsync());
        await page.Locator("#guide-close").ClickAsync();
        Assert.Equal("feedback", (await annotator.NextScreenAsync()).View);
        Assert.Equal(verdict, await page.Locator("#verdict").InnerTextAsync());

        // A reload does not show them again before the item: they were read once in this tab.
        await annotator.ContinueAsync(keyboard: false);
        await page.ReloadAsync();
        Assert.Equal("item", (await annotator.CurrentScreenAsync()).View);
    }
}
