using System.Net;
using System.Net.Http.Json;

namespace TeachServe.Server.Tests;

/// <summary>
/// Rate limits without a key are per client address: behind a configured proxy the forwarded address counts, a
/// client cannot pick its own address, and one client using up the launch or sign-in attempts locks out nobody else.
/// </summary>
public sealed class ClientAddressTests
{
    private const string Proxy = "10.0.0.5";

    private static HttpClient Via(TestApp app, string peer, string? forwardedFor)
    {
        var client = app.Client();
        client.DefaultRequestHeaders.Add(TestApp.PeerHeader, peer);
        if (forwardedFor is not null) client.DefaultRequestHeaders.Add("X-Forwarded-For", forwardedFor);
        return client;
    }

    private static Task<HttpResponseMessage> LaunchAsync(HttpClient client) =>
        client.PostAsJsonAsync("/api/v1/launch", new { code = "not-a-launch-code" });

    private static Task<HttpResponseMessage> SignInAsync(HttpClient client) =>
        client.PostAsync("/console/sign-in", new FormUrlEncodedContent([new("ownerKey", "tso.prj_guess.guess")]));

    public static TheoryData<string> Doors => ["launch", "sign-in"];

    private static Task<HttpResponseMessage> KnockAsync(string door, HttpClient client) =>
        door == "launch" ? LaunchAsync(client) : SignInAsync(client);

    [Theory]
    [MemberData(nameof(Doors))]
    public async Task Behind_a_known_proxy_one_client_using_up_its_attempts_does_not_lock_out_another(string door)
    {
        using var app = new TestApp(new()
        {
            ["TeachServe:ForwardedHeaders:KnownProxies:0"] = Proxy,
            ["TeachServe:RateLimit:CredentialPermitLimit"] = "3",
        });
        // The proxy appends the address it saw; what the client wrote before it is not believed.
        var a = Via(app, Proxy, "192.0.2.77, 203.0.113.1");
        var b = Via(app, Proxy, "192.0.2.77, 203.0.113.2");

        for (var i = 0; i < 3; i++) Assert.NotEqual(HttpStatusCode.TooManyRequests, (await KnockAsync(door, a)).StatusCode);
        var limited = await KnockAsync(door, a);
        await Api.ProblemAsync(limited, 429);
        Assert.NotNull(limited.Headers.RetryAfter);

        Assert.NotEqual(HttpStatusCode.TooManyRequests, (await KnockAsync(door, b)).StatusCode);
    }

    [Fact]
    public async Task Forwarded_addresses_are_ignored_from_anyone_but_a_known_proxy()
    {
        using var app = new TestApp(new()
        {
            ["TeachServe:ForwardedHeaders:KnownProxies:0"] = Proxy,
            ["TeachServe:RateLimit:CredentialPermitLimit"] = "3",
        });
        // A direct client naming a new address on every request still has one bucket: its own.
        for (var i = 0; i < 3; i++)
            Assert.NotEqual(HttpStatusCode.TooManyRequests, (await LaunchAsync(Via(app, "198.51.100.7", $"203.0.113.{i + 10}"))).StatusCode);
        await Api.ProblemAsync(await LaunchAsync(Via(app, "198.51.100.7", "203.0.113.99")), 429);
        Assert.NotEqual(HttpStatusCode.TooManyRequests, (await LaunchAsync(Via(app, "198.51.100.8", null))).StatusCode);
    }

    [Fact]
    public async Task Without_configured_proxies_the_forwarded_header_is_ignored()
    {
        using var app = new TestApp(new() { ["TeachServe:RateLimit:CredentialPermitLimit"] = "3" });
        for (var i = 0; i < 3; i++)
            Assert.NotEqual(HttpStatusCode.TooManyRequests, (await LaunchAsync(Via(app, Proxy, $"203.0.113.{i + 1}"))).StatusCode);
        await Api.ProblemAsync(await LaunchAsync(Via(app, Proxy, "203.0.113.50")), 429);
    }
}
