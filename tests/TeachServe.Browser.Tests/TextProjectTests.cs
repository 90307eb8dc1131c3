using System.Net.Http.Json;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.Playwright;

namespace TeachServe.Browser.Tests;

/// <summary>
/// A project with text items only (family <c>text</c>), end to end in the browser: the owner uploads texts and compiles
/// in the console, the server embeds them, and an annotator is onboarded on the page, reading each text.
/// </summary>
public sealed class TextProjectTests(ServerFixture fixture) : IClassFixture<ServerFixture>
{
    [Fact]
    public async Task Texts_uploaded_and_compiled_in_the_console_teach_an_annotator_who_reads_them_on_the_page()
    {
        // 120 invented recipe steps of the kitchen-steps seed project (a few hundred texts at most keep the suite short).
        var lines = File.ReadLines(Annotator.RepositoryFile("seed-projects", "kitchen-steps", "items.jsonl"))
            .Where(l => !string.IsNullOrWhiteSpace(l)).Take(120).ToList();
        var truth = new Dictionary<string, string>(StringComparer.Ordinal);
        foreach (var line in lines)
        {
            using var doc = JsonDocument.Parse(line);
            truth[doc.RootElement.GetProperty("content").GetProperty("text").GetString()!] = doc.RootElement.GetProperty("label").GetString()!;
        }

        using var admin = fixture.Api(BrowserServer.AdminKey);
        var created = await admin.PostAsJsonAsync("/api/v1/projects", new JsonObject
        {
            ["name"] = "Kitchen steps (browser test)",
            ["labels"] = new JsonArray("prep", "heat", "finish"),
            ["family"] = new JsonObject { ["kind"] = "text", ["dimensions"] = 16 },
            ["gate"] = new JsonObject
            {
                ["targetError"] = 0.15, ["maxTeachingItems"] = 20, ["retakes"] = 0,
                ["test"] = new JsonObject { ["mode"] = "fixed", ["maxItems"] = 10, ["delta"] = 0.5 },
            },
        });
        Assert.Equal(System.Net.HttpStatusCode.Created, created.StatusCode);
        var keys = (await created.Content.ReadFromJsonAsync<JsonObject>())!;
        var projectId = keys["projectId"]!.GetValue<string>();

        var page = await fixture.NewPageAsync();
        await page.GotoAsync(fixture.Server.BaseUrl + "/console");
        await page.GetByLabel("Owner key").FillAsync(keys["ownerKey"]!.GetValue<string>());
        await page.GetByRole(AriaRole.Button, new() { Name = "Sign in" }).ClickAsync();
        await page.GotoAsync(fixture.Server.BaseUrl + "/console/project");
        await page.Locator("#items-file").SetInputFilesAsync(new FilePayload
        {
            Name = "kitchen-steps.jsonl", MimeType = "application/x-ndjson", Buffer = System.Text.Encoding.UTF8.GetBytes(string.Join('\n', lines)),
        });
        await page.GetByRole(AriaRole.Button, new() { Name = "Upload" }).ClickAsync();
        await page.Locator(".message.ok").WaitForAsync(new() { Timeout = 120_000 });
        Assert.Contains("120 new", await page.Locator(".message.ok").InnerTextAsync(), StringComparison.Ordinal);
        await page.GetByRole(AriaRole.Button, new() { Name = "Compile a new model version" }).ClickAsync();
        await page.Locator(".message.ok", new() { HasText = "Model version 1 is ready" }).WaitForAsync(new() { Timeout = 120_000 });
        await Browser.ShotAsync(page, "text-01-console-compiled");
        var versionRow = await page.Locator("table.versions tbody tr").First.InnerTextAsync();
        Assert.Contains("MiB in memory", versionRow, StringComparison.Ordinal);
        Assert.Contains("384 → 16 components", versionRow, StringComparison.Ordinal);

        using (var owner = fixture.Api(keys["ownerKey"]!.GetValue<string>()))
        {
            var version = (await owner.GetFromJsonAsync<JsonObject>($"/api/v1/projects/{projectId}/versions/1"))!;
            Assert.Equal("text", version["summary"]!["family"]!.GetValue<string>());
            Assert.Equal(384, version["summary"]!["vectors"]!["length"]!.GetValue<int>());
        }

        using var embed = fixture.Api(keys["embedKey"]!.GetValue<string>());
        var started = await embed.PostAsJsonAsync($"/api/v1/projects/{projectId}/sessions", new { workerRef = "text-reader" });
        Assert.Equal(System.Net.HttpStatusCode.Created, started.StatusCode);
        var session = (await started.Content.ReadFromJsonAsync<JsonObject>())!;
        var annotatorPage = await fixture.NewPageAsync();
        await annotatorPage.GotoAsync(session["launchUrl"]!.GetValue<string>());
        var annotator = new Annotator(annotatorPage, annotatorPage.MainFrame) { TextTruth = truth };
        var shot = false;
        await annotator.RunToEndAsync(keyboard: false, async screen =>
        {
            if (screen.View != "item" || shot) return;
            shot = true;
            // The page shows the text; nothing on it is a vector.
            Assert.False(string.IsNullOrWhiteSpace(await annotatorPage.Locator("#item-figure p.text").InnerTextAsync()));
            await Browser.ShotAsync(annotatorPage, "text-02-item");
        });
        await Browser.ShotAsync(annotatorPage, "text-03-end");
        using var ownerClient = fixture.Api(keys["ownerKey"]!.GetValue<string>());
        var final = (await ownerClient.GetFromJsonAsync<JsonObject>($"/api/v1/sessions/{session["sessionId"]!.GetValue<string>()}"))!;
        Assert.Equal("released", final["phase"]!.GetValue<string>());
    }
}
