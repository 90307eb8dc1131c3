using System.Net;
using System.Net.Http.Json;
using System.Text.RegularExpressions;
using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

/// <summary>Replaces the project's keys, so it has a server of its own (a class fixture is per test class).</summary>
public sealed partial class ConsoleKeysTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    [Fact]
    public async Task An_owner_replaces_the_embed_key_then_the_owner_key_and_signs_in_with_the_new_one()
    {
        var page = await fixture.NewPageAsync(1280, 900);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        await page.GetByLabel("Owner key").FillAsync(fixture.OwnerKey);
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Onboarding" }).WaitForAsync();
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/project");

        // The embed key: replaced, shown once, the old one refused by the API at once.
        await page.GetByRole(AriaRole.Button, new() { Name = "Replace the embed key" }).ClickAsync();
        var shown = await page.Locator(".message.ok", new() { HasText = "New embed key" }).InnerTextAsync();
        var embed = EmbedKey().Match(shown).Value;
        Assert.StartsWith($"tse.{fixture.ProjectId}.", embed, StringComparison.Ordinal);
        await Browser.ShotAsync(page, "console-08-new-embed-key");
        var body = new { workerRef = "keys-test" };
        Assert.Equal(HttpStatusCode.Unauthorized, (await fixture.Api(fixture.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{fixture.ProjectId}/sessions", body)).StatusCode);
        Assert.Equal(HttpStatusCode.Created, (await fixture.Api(embed).PostAsJsonAsync($"/api/v1/projects/{fixture.ProjectId}/sessions", body)).StatusCode);

        // The owner key: replaced; this console session ends and the sign-in page shows the new key once.
        await page.GetByRole(AriaRole.Button, new() { Name = "Replace the owner key and sign in with the new one" }).ClickAsync();
        var notice = await page.Locator("#sign-in-notice").InnerTextAsync();
        var owner = OwnerKey().Match(notice).Value;
        Assert.StartsWith($"tso.{fixture.ProjectId}.", owner, StringComparison.Ordinal);
        Assert.NotEqual(fixture.OwnerKey, owner);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/project");
        Assert.EndsWith("/console", page.Url, StringComparison.Ordinal);

        await page.GetByLabel("Owner key").FillAsync(fixture.OwnerKey);
        var refused = await page.RunAndWaitForResponseAsync(
            () => page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync(),
            r => r.Url.EndsWith("/console/sign-in", StringComparison.Ordinal));
        Assert.Equal(401, refused.Status);
        await page.GetByLabel("Owner key").FillAsync(owner);
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Onboarding" }).WaitForAsync();
    }

    [GeneratedRegex(@"tse\.prj_[a-z0-9]+\.[A-Za-z0-9_-]+")]
    private static partial Regex EmbedKey();

    [GeneratedRegex(@"tso\.prj_[a-z0-9]+\.[A-Za-z0-9_-]+")]
    private static partial Regex OwnerKey();
}
