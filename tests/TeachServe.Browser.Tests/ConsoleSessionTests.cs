using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

/// <summary>
/// The per-annotator page opened from the session table, and the model-version filter, at desk and phone sizes.
/// Compiles a second version, so it has a server of its own.
/// </summary>
public sealed class ConsoleSessionTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    [Fact]
    public async Task The_owner_opens_an_annotators_answers_and_checks_from_the_table_and_filters_by_version()
    {
        // An annotator on version 1 who gets the first teaching item and the first test item wrong.
        var (sessionId, link) = await fixture.StartSessionAsync("detail-annotator");
        var annotatorPage = await fixture.NewPageAsync();
        await annotatorPage.GotoAsync(link);
        var annotator = new Annotator(annotatorPage, annotatorPage.MainFrame);
        await annotator.OpenAsync();
        var (taughtWrong, testedWrong, answers) = (false, false, 0);
        for (var i = 0; i < 400 && annotator.Screen.View != "end"; i++)
        {
            if (annotator.Screen.View != "item")
            {
                await annotator.ContinueAsync(keyboard: false);
                continue;
            }
            var testing = await annotatorPage.Locator("#meter").GetAttributeAsync("data-phase") == "testing";
            var wrong = testing ? !testedWrong : !taughtWrong;
            if (testing) testedWrong = true;
            else taughtWrong = true;
            answers++;
            await annotator.AnswerAsync(keyboard: false, correct: !wrong);
        }
        Assert.Equal("end", annotator.Screen.View);
        var (steps, _, phase) = await fixture.AnswersAsync(sessionId);
        Assert.Equal(answers, steps);

        // The owner signs in and opens that annotator from the session table.
        var page = await fixture.NewPageAsync(1280, 800);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        await page.GetByLabel("Owner key").FillAsync(fixture.OwnerKey);
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Onboarding" }).WaitForAsync();
        await page.Locator("table.sessions").GetByRole(AriaRole.Link, new() { Name = "detail-annotator" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Every answer" }).WaitForAsync();
        Assert.EndsWith($"/console/sessions/{sessionId}", page.Url, StringComparison.Ordinal);
        Assert.Contains("detail-annotator", await page.Locator("h1").InnerTextAsync(), StringComparison.Ordinal);
        Assert.Equal(phase, await page.Locator("dd[data-outcome]").GetAttributeAsync("data-outcome"));
        Assert.Equal(answers, await page.Locator("table.answers tbody tr").CountAsync());
        // Exactly the two wrong answers are highlighted: the first of teaching, the first of the check.
        var mistakes = await page.Locator("table.answers tbody tr.mistake").AllInnerTextsAsync();
        Assert.Equal(2, mistakes.Count);
        Assert.StartsWith("1\tteach", mistakes[0], StringComparison.Ordinal);
        Assert.Contains("\ttest 1\t", mistakes[1], StringComparison.Ordinal);
        Assert.True(await page.Locator("table.checks tbody tr").CountAsync() >= 1);
        var picture = page.Locator("img[src$='/predicted-error.svg']");
        Assert.True(await picture.EvaluateAsync<bool>("img => img.complete && img.naturalWidth > 0"), "the predicted-error picture did not load");
        await Browser.ShotAsync(page, "console-12-annotator");

        await page.SetViewportSizeAsync(390, 844);
        await page.ReloadAsync();
        Assert.True(await page.EvaluateAsync<bool>("() => document.documentElement.scrollWidth <= window.innerWidth"), "the annotator page is wider than the phone");
        await Browser.ShotAsync(page, "console-13-phone-annotator");

        // A second version with another target, and an annotator on it.
        await page.SetViewportSizeAsync(1280, 800);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/project");
        // A stricter target than the demo's 0.12 (a looser one would need a longer test than the demo allows).
        await page.GetByLabel("Target error").FillAsync("0.1");
        await page.GetByRole(AriaRole.Button, new() { Name = "Save settings" }).ClickAsync();
        await page.Locator(".message.ok", new() { HasText = "Settings saved" }).WaitForAsync();
        await page.GetByRole(AriaRole.Button, new() { Name = "Compile a new model version" }).ClickAsync();
        await page.Locator(".message.ok", new() { HasText = "Model version 2 is ready" }).WaitForAsync();
        await fixture.StartSessionAsync("version-2-annotator");

        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        var all = await page.Locator("table.sessions td.worker").AllInnerTextsAsync();
        Assert.Contains("version-2-annotator", all);
        Assert.Contains("detail-annotator", all);
        await page.GetByLabel("Model version").SelectOptionAsync("2");
        await page.GetByRole(AriaRole.Button, new() { Name = "Show" }).ClickAsync();
        await page.Locator(".filter-note", new() { HasText = "version 2 only" }).WaitForAsync();
        Assert.EndsWith("/console?version=2", page.Url, StringComparison.Ordinal);
        Assert.Equal(["version-2-annotator"], await page.Locator("table.sessions td.worker").AllInnerTextsAsync());
        Assert.Equal("2", await page.GetByLabel("Model version").InputValueAsync());
        await Browser.ShotAsync(page, "console-14-version-2");

        await page.GetByLabel("Model version").SelectOptionAsync("1");
        await page.GetByRole(AriaRole.Button, new() { Name = "Show" }).ClickAsync();
        await page.Locator(".filter-note", new() { HasText = "version 1 only" }).WaitForAsync();
        var one = await page.Locator("table.sessions td.worker").AllInnerTextsAsync();
        Assert.Contains("detail-annotator", one);
        Assert.DoesNotContain("version-2-annotator", one);
        foreach (var img in await page.Locator("figure.plot img").AllAsync())
        {
            Assert.EndsWith("?version=1", await img.GetAttributeAsync("src"), StringComparison.Ordinal);
            Assert.True(await img.EvaluateAsync<bool>("i => i.complete && i.naturalWidth > 0"), "a picture did not load");
        }
        await Browser.ShotAsync(page, "console-15-version-1");

        await page.GetByLabel("Model version").SelectOptionAsync("all");
        await page.GetByRole(AriaRole.Button, new() { Name = "Show" }).ClickAsync();
        await page.Locator("#version-select option[value='all'][selected]").WaitForAsync(new() { State = WaitForSelectorState.Attached });
        Assert.Contains("Targets differ between versions", await page.Locator("figure.plot").Nth(1).InnerTextAsync(), StringComparison.Ordinal);
        await Browser.ShotAsync(page, "console-16-all-versions");

        await page.SetViewportSizeAsync(390, 844);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console?version=1");
        Assert.True(await page.EvaluateAsync<bool>("() => document.documentElement.scrollWidth <= window.innerWidth"), "the filtered page is wider than the phone");
        await Browser.ShotAsync(page, "console-17-phone-version-1");
    }
}
