using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

/// <summary>Adds sessions to its project, so it has a server of its own (a class fixture is per test class).</summary>
public sealed class ConsolePagingTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    [Fact]
    public async Task The_session_table_pages_through_every_session_newest_first()
    {
        // The demo's own session plus 30: two pages of 25.
        for (var i = 0; i < 30; i++) await fixture.StartSessionAsync($"pager-{i:D2}");
        var page = await fixture.NewPageAsync(1280, 900);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        await page.GetByLabel("Owner key").FillAsync(fixture.OwnerKey);
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Onboarding" }).WaitForAsync();

        Assert.Equal(25, await page.Locator("table.sessions tbody tr").CountAsync());
        Assert.Equal("Sessions 1–25 of 31, newest first.", await page.Locator(".pager span").InnerTextAsync());
        Assert.Equal("pager-29", await page.Locator("table.sessions tbody tr td.worker").First.InnerTextAsync());
        Assert.Equal(0, await page.GetByRole(AriaRole.Link, new() { Name = "Newer" }).CountAsync());

        await page.GetByRole(AriaRole.Link, new() { Name = "Older" }).ClickAsync();
        await page.Locator(".pager span", new() { HasText = "Sessions 26–31 of 31" }).WaitForAsync();
        var workers = await page.Locator("table.sessions tbody tr td.worker").AllInnerTextsAsync();
        Assert.Equal(6, workers.Count);
        Assert.Contains("pager-00", workers);
        Assert.Equal(0, await page.GetByRole(AriaRole.Link, new() { Name = "Older" }).CountAsync());
        await Browser.ShotAsync(page, "console-09-second-page");

        // A page past the end shows the last one; an unreadable number the first.
        await page.GotoAsync(fixture.Server.BaseUrl + "/console?page=99");
        Assert.Equal("Sessions 26–31 of 31, newest first.", await page.Locator(".pager span").InnerTextAsync());
        await page.GotoAsync(fixture.Server.BaseUrl + "/console?page=abc");
        Assert.Equal("Sessions 1–25 of 31, newest first.", await page.Locator(".pager span").InnerTextAsync());

        // On a phone the wide tables scroll inside their own frames; the page itself is never wider than the screen.
        await page.SetViewportSizeAsync(390, 844);
        foreach (var (path, shot) in new[] { ("/console", "console-10-phone-onboarding"), ("/console/project", "console-11-phone-project") })
        {
            await page.GotoAsync(fixture.Server.BaseUrl + path);
            Assert.True(await page.EvaluateAsync<bool>("() => document.documentElement.scrollWidth <= window.innerWidth"), $"{path} is wider than the phone");
            await Browser.ShotAsync(page, shot);
        }
    }
}
