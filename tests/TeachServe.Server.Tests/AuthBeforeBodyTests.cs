using System.Net.Http.Headers;
using System.Text;
using System.Text.Json.Nodes;

namespace TeachServe.Server.Tests;

/// <summary>A request's key is checked before its body is read, and no problem details name the server's .NET types.</summary>
public sealed class AuthBeforeBodyTests
{
    private static readonly string[] InternalNames =
        ["System.", "Microsoft.", "TeachServe.", "AnswerRequest", "LaunchRequest", "Int32", "String "];

    /// <summary>8 MiB less a little (under the server's body limit) of JSON that breaks after its first bytes.</summary>
    private static ByteArrayContent MalformedBody()
    {
        var bytes = new byte[8 * 1024 * 1024 - 1024];
        Array.Fill(bytes, (byte)'x');
        Encoding.ASCII.GetBytes("{\"step\": 0, \"itemRef\": ").CopyTo(bytes, 0);
        var content = new ByteArrayContent(bytes);
        content.Headers.ContentType = new MediaTypeHeaderValue("application/json");
        return content;
    }

    private static void AssertNoInternalNames(JsonNode problem)
    {
        var text = problem.ToJsonString();
        foreach (var name in InternalNames) Assert.DoesNotContain(name, text, StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_malformed_large_body_without_a_key_is_answered_401_before_it_is_parsed()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var session = await app.StartSessionAsync(keys);

        var anonymous = await app.Client().PostAsync($"/api/v1/sessions/{session.SessionId}/answers", MalformedBody());
        AssertNoInternalNames(await Api.ProblemAsync(anonymous, 401));
        var wrongKey = await app.Client("tst.ses_nothing.guess").PostAsync($"/api/v1/sessions/{session.SessionId}/answers", MalformedBody());
        AssertNoInternalNames(await Api.ProblemAsync(wrongKey, 401));
        // A key of the wrong role is refused before the body too.
        var embed = await app.Client(keys.EmbedKey).PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", MalformedBody());
        AssertNoInternalNames(await Api.ProblemAsync(embed, 403));
    }

    [Theory]
    [InlineData("large")]
    [InlineData("{\"step\": \"zero\", \"itemRef\": 1, \"label\": 2}")]
    [InlineData("{\"step\": 0}")]
    [InlineData("[1, 2, 3]")]
    [InlineData("")]
    public async Task A_malformed_body_with_a_valid_key_is_400_without_internal_type_names(string body)
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var session = await app.StartSessionAsync(keys);

        HttpContent content = body == "large" ? MalformedBody() : Api.RawJson(body);
        var response = await session.Annotator.PostAsync($"/api/v1/sessions/{session.SessionId}/answers", content);
        var problem = await Api.ProblemAsync(response, 400);
        AssertNoInternalNames(problem);
        Assert.False(string.IsNullOrWhiteSpace(problem["detail"]?.GetValue<string>()));
    }

    [Fact]
    public async Task Unauthenticated_bodies_at_open_doors_are_answered_without_internal_type_names()
    {
        using var app = new TestApp();
        var launch = await app.Client().PostAsync("/api/v1/launch", Api.RawJson("{\"code\": 12}"));
        AssertNoInternalNames(await Api.ProblemAsync(launch, 400));
        var project = await app.Client(TestApp.AdminKey).PostAsync("/api/v1/projects", Api.RawJson("{\"name\": [}"));
        AssertNoInternalNames(await Api.ProblemAsync(project, 400));
    }
}
