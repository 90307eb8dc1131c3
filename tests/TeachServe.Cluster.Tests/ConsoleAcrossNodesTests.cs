using System.Net;
using System.Text.RegularExpressions;

namespace TeachServe.Cluster.Tests;

/// <summary>
/// The owner console behind a balancer: its cookie and form tokens are encrypted with the data-protection key
/// ring, which lives in the database, so a page served by one node can be submitted to the other. Each node of
/// the local cluster has a home folder of its own (as containers do), so a key ring kept on local disk would fail here.
/// </summary>
public sealed partial class ConsoleAcrossNodesTests
{
    private const string FormCookie = "teachserve-console-form";
    private const string AuthCookie = "teachserve-console";

    [Fact]
    public async Task A_console_form_from_one_node_signs_in_on_the_other_and_the_cookie_works_on_both()
    {
        await using var cluster = await Cluster.StartAsync(nodes: 2, front: false);
        var keys = await Projects.ReadyAsync(cluster.Node(0, Cluster.AdminKey), k => cluster.Node(1, k));
        using var node0 = Plain(cluster.Ports[0]);
        using var node1 = Plain(cluster.Ports[1]);

        // The sign-in form, with its token and cookie, from node 0.
        using var page = await node0.GetAsync("/console");
        Assert.Equal(HttpStatusCode.OK, page.StatusCode);
        var formToken = FormToken(await page.Content.ReadAsStringAsync());
        var formCookie = CookieValue(page, FormCookie);

        // Submitted to node 1.
        using var signIn = new HttpRequestMessage(HttpMethod.Post, "/console/sign-in")
        {
            Content = new FormUrlEncodedContent(new Dictionary<string, string> { ["__form"] = formToken, ["ownerKey"] = keys.OwnerKey }),
        };
        signIn.Headers.Add("Cookie", $"{FormCookie}={formCookie}");
        using var signedIn = await node1.SendAsync(signIn);
        Assert.True(signedIn.StatusCode == HttpStatusCode.Redirect,
            $"sign-in on the other node answered {(int)signedIn.StatusCode}: {await signedIn.Content.ReadAsStringAsync()}");
        var auth = CookieValue(signedIn, AuthCookie);

        // The console cookie node 1 issued opens the project on both nodes.
        foreach (var node in new[] { node0, node1 })
        {
            using var request = new HttpRequestMessage(HttpMethod.Get, "/console");
            request.Headers.Add("Cookie", $"{AuthCookie}={auth}; {FormCookie}={formCookie}");
            using var console = await node.SendAsync(request);
            var html = await console.Content.ReadAsStringAsync();
            Assert.Equal(HttpStatusCode.OK, console.StatusCode);
            Assert.Contains("Seam check", html, StringComparison.Ordinal);
            Assert.DoesNotContain("name=\"ownerKey\"", html, StringComparison.Ordinal);
        }

        // A forged cookie is still refused.
        using var forged = new HttpRequestMessage(HttpMethod.Get, "/console");
        forged.Headers.Add("Cookie", $"{AuthCookie}={auth[..^4]}AAAA");
        using var refused = await node0.SendAsync(forged);
        Assert.Contains("name=\"ownerKey\"", await refused.Content.ReadAsStringAsync(), StringComparison.Ordinal);
    }

    /// <summary>No cookie container (the console's cookies are Secure and the nodes speak plain loopback HTTP), no redirects followed.</summary>
    private static HttpClient Plain(int port) =>
        new(new SocketsHttpHandler { UseCookies = false, AllowAutoRedirect = false })
        {
            BaseAddress = new Uri($"http://127.0.0.1:{port}"),
            Timeout = TimeSpan.FromSeconds(30),
        };

    private static string FormToken(string html) =>
        FormField().Match(html) is { Success: true } m ? WebUtility.HtmlDecode(m.Groups[1].Value)
            : throw new InvalidOperationException("No form token in the page.");

    private static string CookieValue(HttpResponseMessage response, string name)
    {
        var header = response.Headers.TryGetValues("Set-Cookie", out var values)
            ? values.FirstOrDefault(v => v.StartsWith(name + "=", StringComparison.Ordinal))
            : null;
        Assert.True(header is not null, $"no {name} cookie set");
        return header![(name.Length + 1)..].Split(';')[0];
    }

    [GeneratedRegex(@"name=""__form"" value=""([^""]+)""")]
    private static partial Regex FormField();
}
