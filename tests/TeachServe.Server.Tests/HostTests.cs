namespace TeachServe.Server.Tests;

public sealed class HostTests
{
    [Fact]
    public async Task Health_and_readiness_answer_once_migrated()
    {
        using var app = new TestApp();
        var client = app.Client();
        Assert.Equal("ok", (await Api.JsonAsync(await client.GetAsync("/healthz"), 200))["status"]!.GetValue<string>());
        Assert.Equal("ready", (await Api.JsonAsync(await client.GetAsync("/readyz"), 200))["status"]!.GetValue<string>());
    }

    [Fact]
    public async Task OpenApi_document_and_reference_page_are_served()
    {
        using var app = new TestApp();
        var client = app.Client();
        var doc = await client.GetStringAsync("/openapi/v1.json");
        Assert.Contains("/api/v1/projects/{projectId}/sessions", doc, StringComparison.Ordinal);
        Assert.Contains("/api/v1/sessions/{sessionId}/answers", doc, StringComparison.Ordinal);
        var page = await client.GetAsync("/reference");
        Assert.Equal(200, (int)page.StatusCode);
        Assert.Contains("text/html", page.Content.Headers.ContentType?.MediaType, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Unknown_route_is_a_problem_details_404()
    {
        using var app = new TestApp();
        await Api.ProblemAsync(await app.Client().GetAsync("/api/v1/nothing-here"), 404);
    }
}
