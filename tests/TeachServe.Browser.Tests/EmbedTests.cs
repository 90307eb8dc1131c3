using System.Text.Json;

namespace TeachServe.Browser.Tests;

public sealed class EmbedTests(EmbedFixture fixture) : IClassFixture<EmbedFixture>
{
    [Fact]
    public async Task Inside_an_iframe_on_another_origin_the_page_posts_each_phase_change_and_the_end_to_its_parent()
    {
        var (sessionId, link) = await fixture.StartSessionAsync("framed-annotator");
        var page = await fixture.NewPageAsync(1100, 960);
        var platform = $"{fixture.ParentOrigin}/platform?src={Uri.EscapeDataString(link)}&origin={Uri.EscapeDataString(fixture.Server.BaseUrl)}";
        await page.GotoAsync(platform);
        var frame = await (await page.WaitForSelectorAsync("iframe"))!.ContentFrameAsync();
        Assert.NotNull(frame);
        var annotator = new Annotator(page, frame);
        await annotator.OpenAsync();
        await page.WaitForFunctionAsync("() => window.received.length >= 1");
        await Browser.ShotAsync(page, "embed-01-in-platform");

        await annotator.RunToEndAsync(keyboard: false);
        await page.WaitForFunctionAsync("() => window.received.some(m => m.type === 'teachserve:end')");
        await Browser.ShotAsync(page, "embed-02-end-in-platform");

        var messages = JsonSerializer.Deserialize<JsonElement[]>(await page.EvaluateAsync<string>("JSON.stringify(window.received)"))!;
        string[] Types() => messages.Select(m => m.GetProperty("type").GetString()!).ToArray();
        Assert.Equal("teachserve:ready", Types()[0]);
        Assert.All(messages, m => Assert.Equal(sessionId, m.GetProperty("sessionId").GetString()));
        Assert.All(messages, m => Assert.Equal("teachserve", m.GetProperty("source").GetString()));
        var phases = messages.Where(m => m.GetProperty("type").GetString() == "teachserve:phase")
            .Select(m => (m.GetProperty("previousPhase").GetString(), m.GetProperty("phase").GetString())).ToList();
        Assert.Equal([("teaching", "testing"), ("testing", "released")], phases);
        var end = messages.Single(m => m.GetProperty("type").GetString() == "teachserve:end");
        Assert.True(end.GetProperty("released").GetBoolean());
        Assert.Equal("released", end.GetProperty("phase").GetString());
    }
}
