using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

public sealed class ConsoleTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    [Fact]
    public async Task A_wrong_owner_key_and_a_key_of_another_kind_are_refused()
    {
        var page = await fixture.NewPageAsync(1280, 800);
        foreach (var key in new[] { "tso." + fixture.ProjectId + ".not-the-secret", fixture.EmbedKey, BrowserServer.AdminKey })
        {
            await page.GotoAsync(fixture.Server.BaseUrl + "/console");
            await page.GetByLabel("Owner key").FillAsync(key);
            var response = await page.RunAndWaitForResponseAsync(
                () => page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync(),
                r => r.Url.EndsWith("/console/sign-in", StringComparison.Ordinal));
            Assert.Equal(401, response.Status);
            Assert.Contains("That key was not accepted", await page.Locator(".message.error").InnerTextAsync(), StringComparison.Ordinal);
        }
        await Browser.ShotAsync(page, "console-04-wrong-key");
        Assert.DoesNotContain(await page.Context.CookiesAsync(), c => c.Name == "teachserve-console");
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/project");
        Assert.EndsWith("/console", page.Url, StringComparison.Ordinal);
    }

    [Fact]
    public async Task An_uploaded_file_with_errors_lists_them_by_line_and_stores_nothing_then_a_good_one_is_stored()
    {
        var page = await SignedInAsync();
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/project");
        var counts = await page.Locator("table.counts tfoot").InnerTextAsync();

        var bad = string.Join('\n',
            """{"id":"new-1","pool":"teach","label":"healthy","features":{"spot_count":1,"spot_size_mm":0.8,"yellowing":0.1},"content":{"text":"a green leaf"}}""",
            """{"id":"new-2","pool":"teach","label":"maybe","features":{"spot_count":1,"spot_size_mm":0.8,"yellowing":0.1}}""",
            """{"id":"new-3","pool":"practice","label":"fungal-spots","features":{"spot_count":12,"spot_size_mm":3,"yellowing":0.2}}""",
            """{"id":"new-4", "pool": """);
        await page.Locator("#items-file").SetInputFilesAsync(new FilePayload { Name = "more-leaves.jsonl", MimeType = "application/x-ndjson", Buffer = System.Text.Encoding.UTF8.GetBytes(bad) });
        await page.GetByRole(AriaRole.Button, new() { Name = "Upload" }).ClickAsync();
        var problems = page.Locator("#problems table.problems tbody tr");
        await problems.First.WaitForAsync();
        var rows = await problems.AllInnerTextsAsync();
        Assert.Contains(rows, r => r.StartsWith("2\t", StringComparison.Ordinal) && r.Contains("label", StringComparison.Ordinal));
        Assert.Contains(rows, r => r.StartsWith("3\t", StringComparison.Ordinal) && r.Contains("pool", StringComparison.Ordinal));
        Assert.Contains(rows, r => r.StartsWith("4\t", StringComparison.Ordinal));
        Assert.Contains("nothing was stored", await page.Locator("#problems h3").InnerTextAsync(), StringComparison.Ordinal);
        Assert.Equal(counts, await page.Locator("table.counts tfoot").InnerTextAsync());
        await Browser.ShotAsync(page, "console-05-upload-errors");

        var good = bad.Split('\n')[0];
        await page.Locator("#items-file").SetInputFilesAsync(new FilePayload { Name = "one-leaf.jsonl", MimeType = "application/x-ndjson", Buffer = System.Text.Encoding.UTF8.GetBytes(good) });
        await page.GetByRole(AriaRole.Button, new() { Name = "Upload" }).ClickAsync();
        await page.Locator(".message.ok").WaitForAsync();
        Assert.Contains("1 new", await page.Locator(".message.ok").InnerTextAsync(), StringComparison.Ordinal);
        Assert.NotEqual(counts, await page.Locator("table.counts tfoot").InnerTextAsync());

        await page.GetByRole(AriaRole.Button, new() { Name = "Compile a new model version" }).ClickAsync();
        await page.Locator(".message.ok", new() { HasText = "Model version 2 is ready" }).WaitForAsync();
    }

    [Fact]
    public async Task Gate_edits_are_validated_field_by_field_and_then_saved()
    {
        var page = await SignedInAsync();
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/project");
        await page.GetByLabel("Target error").FillAsync("1.5");
        await page.GetByLabel("Teaching budget").FillAsync("0");
        await page.GetByRole(AriaRole.Button, new() { Name = "Save settings" }).ClickAsync();
        var problems = await page.Locator("#problems").InnerTextAsync();
        Assert.Contains("gate.maxTeachingItems", problems, StringComparison.Ordinal);
        Assert.Contains("gate.targetError", problems, StringComparison.Ordinal);
        await Browser.ShotAsync(page, "console-06-settings-invalid");
        // What the owner typed stays in the form, so they fix it instead of typing it again.
        Assert.Equal("0", await page.GetByLabel("Teaching budget").InputValueAsync());
        Assert.Equal("1.5", await page.GetByLabel("Target error").InputValueAsync());

        await page.GetByLabel("Teaching budget").FillAsync("30");
        await page.GetByLabel("Target error").FillAsync("0.12");
        await page.GetByLabel("After a release").FillAsync("Live items arrive in your queue within a day.");
        await page.GetByRole(AriaRole.Button, new() { Name = "Save settings" }).ClickAsync();
        await page.Locator(".message.ok", new() { HasText = "Settings saved" }).WaitForAsync();
        Assert.Equal("0.12", await page.GetByLabel("Target error").InputValueAsync());
        Assert.Equal("30", await page.GetByLabel("Teaching budget").InputValueAsync());
    }

    [Fact]
    public async Task A_form_posted_without_its_anti_forgery_token_is_refused()
    {
        var page = await SignedInAsync();
        // Same browser, same cookies, but a form that did not come from the console's own page.
        using var owner = fixture.Api(fixture.OwnerKey);
        var before = await owner.GetStringAsync($"/api/v1/projects/{fixture.ProjectId}/versions");
        var form = page.APIRequest.CreateFormData();
        form.Set("ownerKey", "irrelevant");
        var response = await page.APIRequest.PostAsync(fixture.Server.BaseUrl + "/console/versions", new() { Form = form });
        Assert.Equal(400, response.Status);
        Assert.Equal(before, await owner.GetStringAsync($"/api/v1/projects/{fixture.ProjectId}/versions"));
    }

    [Fact]
    public async Task The_pictures_are_svg_in_a_sans_serif_face_and_an_unknown_picture_is_a_404_problem()
    {
        var page = await SignedInAsync();
        foreach (var name in new[] { "calibration.svg", "learning-curve.svg", "items-to-release.svg" })
        {
            var picture = await page.APIRequest.GetAsync($"{fixture.Server.BaseUrl}/console/plots/{name}");
            Assert.Equal(200, picture.Status);
            Assert.StartsWith("image/svg+xml", picture.Headers["content-type"], StringComparison.Ordinal);
            var svg = await picture.TextAsync();
            Assert.Contains("sans-serif", svg, StringComparison.Ordinal);
            Assert.DoesNotContain("Serif", svg, StringComparison.Ordinal);
        }
        var missing = await page.APIRequest.GetAsync($"{fixture.Server.BaseUrl}/console/plots/nope.svg");
        Assert.Equal(404, missing.Status);
        Assert.StartsWith("application/problem+json", missing.Headers["content-type"], StringComparison.Ordinal);
        using var problem = System.Text.Json.JsonDocument.Parse(await missing.TextAsync());
        Assert.Contains("items-to-release.svg", problem.RootElement.GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task The_landing_page_links_the_console_and_an_api_reference_that_loads_nothing_from_elsewhere()
    {
        var page = await fixture.NewPageAsync(1280, 800);
        var elsewhere = new List<string>();
        page.Request += (_, r) =>
        {
            if (!r.Url.StartsWith(fixture.Server.BaseUrl, StringComparison.Ordinal) && !r.Url.StartsWith("data:", StringComparison.Ordinal)) elsewhere.Add(r.Url);
        };
        var landing = await page.GotoAsync(fixture.Server.BaseUrl + "/");
        Assert.Equal(200, landing!.Status);
        Assert.Equal("TeachServe", await page.Locator("h1").InnerTextAsync());
        await Browser.ShotAsync(page, "landing-01");

        await page.GetByRole(AriaRole.Link, new() { Name = "API reference" }).ClickAsync();
        // Our own page over the served document: every operation of the document is listed, grouped by tag.
        await page.Locator("#status", new() { HasTextRegex = new System.Text.RegularExpressions.Regex(@"^\d+ operations\.$") }).WaitForAsync();
        var operations = await page.Locator("article.operation").CountAsync();
        using var api = new HttpClient();
        var document = System.Text.Json.Nodes.JsonNode.Parse(await api.GetStringAsync(fixture.Server.BaseUrl + "/openapi/v1.json"))!;
        var expected = document["paths"]!.AsObject().Sum(p => p.Value!.AsObject().Count(m => m.Key is "get" or "post" or "put" or "patch" or "delete"));
        Assert.Equal(expected, operations);
        Assert.True(await page.GetByText("Create a project from a project.json document").First.IsVisibleAsync());
        await Browser.ShotAsync(page, "landing-02-api-reference");
        Assert.Empty(elsewhere);

        await page.GotoAsync(fixture.Server.BaseUrl + "/");
        await page.GetByRole(AriaRole.Link, new() { Name = "Owner console" }).ClickAsync();
        await page.GetByLabel("Owner key").WaitForAsync();
    }

    private async Task<IPage> SignedInAsync()
    {
        var page = await fixture.NewPageAsync(1280, 900);
        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        await page.GetByLabel("Owner key").FillAsync(fixture.OwnerKey);
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GetByRole(AriaRole.Heading, new() { Name = "Onboarding" }).WaitForAsync();
        return page;
    }
}
