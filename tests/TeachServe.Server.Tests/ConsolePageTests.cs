using System.Net;
using System.Net.Http.Json;
using System.Text.RegularExpressions;
using Microsoft.AspNetCore.Mvc.Testing;

namespace TeachServe.Server.Tests;

/// <summary>The owner console's pages as HTML: what owners and annotators typed is shown as text, never as markup.</summary>
public sealed partial class ConsolePageTests
{
    private const string Markup = "<img src=x onerror=alert(1)>";

    [Fact]
    public async Task A_project_name_and_a_worker_ref_with_markup_are_shown_as_text_and_the_pages_carry_no_script()
    {
        using var app = new TestApp();
        var project = TestApp.ProjectJson();
        project["name"] = "Seams & \"welds\" " + Markup;
        var keys = await app.ReadyProjectAsync(project);
        await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = Markup }), 201);

        // The console's cookies are Secure and the test server speaks plain HTTP: carry them by hand.
        using var client = app.CreateClient(new WebApplicationFactoryClientOptions { HandleCookies = false, AllowAutoRedirect = false });
        using var signInPage = await client.GetAsync("/console");
        var formCookie = Cookie(signInPage, "teachserve-console-form");
        var token = WebUtility.HtmlDecode(FormField().Match(await signInPage.Content.ReadAsStringAsync()).Groups[1].Value);
        using var signIn = new HttpRequestMessage(HttpMethod.Post, "/console/sign-in")
        {
            Content = new FormUrlEncodedContent(new Dictionary<string, string> { ["__form"] = token, ["ownerKey"] = keys.OwnerKey }),
        };
        signIn.Headers.Add("Cookie", formCookie);
        using var signedIn = await client.SendAsync(signIn);
        Assert.Equal(HttpStatusCode.Redirect, signedIn.StatusCode);
        var cookies = $"{formCookie}; {Cookie(signedIn, "teachserve-console")}";

        foreach (var path in new[] { "/console", "/console/project" })
        {
            using var request = new HttpRequestMessage(HttpMethod.Get, path);
            request.Headers.Add("Cookie", cookies);
            using var response = await client.SendAsync(request);
            var html = await response.Content.ReadAsStringAsync();
            Assert.Equal(HttpStatusCode.OK, response.StatusCode);
            Assert.StartsWith("text/html", response.Content.Headers.ContentType!.ToString(), StringComparison.Ordinal);
            Assert.Contains("script-src 'self'", response.Headers.GetValues("Content-Security-Policy").Single(), StringComparison.Ordinal);
            Assert.DoesNotContain(Markup, html, StringComparison.Ordinal);
            Assert.DoesNotContain("<script", html, StringComparison.OrdinalIgnoreCase);
            Assert.Contains("Seams &amp; &quot;welds&quot; &lt;img src=x onerror=alert(1)&gt;", html, StringComparison.Ordinal);
        }
        using var onboarding = new HttpRequestMessage(HttpMethod.Get, "/console");
        onboarding.Headers.Add("Cookie", cookies);
        var sessions = await (await client.SendAsync(onboarding)).Content.ReadAsStringAsync();
        Assert.Contains("<td class=\"worker\">&lt;img src=x onerror=alert(1)&gt;</td>", sessions, StringComparison.Ordinal);
    }

    /// <summary>"name=value" of a Set-Cookie header, ready for a Cookie header.</summary>
    private static string Cookie(HttpResponseMessage response, string name) =>
        response.Headers.GetValues("Set-Cookie").First(v => v.StartsWith(name + "=", StringComparison.Ordinal)).Split(';')[0];

    [GeneratedRegex("name=\"__form\" value=\"([^\"]+)\"")]
    private static partial Regex FormField();
}
