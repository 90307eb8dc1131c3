using System.Globalization;
using System.Net;
using System.Net.Http.Json;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Tests;

/// <summary>Test items' images through opaque per-session addresses, and the network guard of the server's fetch.</summary>
public sealed class MediaTests
{
    private static readonly Dictionary<string, string?> AllowLoopback = new() { ["TeachServe:Media:AllowPrivateNetworks"] = "true" };

    /// <summary>Items as <see cref="TestApp.ItemsJsonl"/>, each with an image whose address names its pool, label and id.</summary>
    private static string ItemsWithImages(string origin)
    {
        var lines = new StringBuilder();
        void Add(string id, string pool, double x) => lines.Append(JsonSerializer.Serialize(new
        {
            id, pool, label = TestApp.TruthOf(x), features = new Dictionary<string, double> { ["x"] = x },
            content = new { text = $"x={x.ToString(CultureInfo.InvariantCulture)}", imageUrl = $"{origin}/{pool}/{TestApp.TruthOf(x)}/{id}.png" },
        })).Append('\n');
        for (var i = 0; i < 20; i++) Add($"seam-teach-{i:00}", "teach", i);
        for (var i = 0; i < 20; i++) Add($"seam-held-{i:00}", "test", i + 0.5);
        return lines.ToString();
    }

    /// <summary>Answers teaching items rightly until the session serves its first test item; returns that step.</summary>
    private static async Task<JsonNode> FirstTestStepAsync(TestApp.StartedSession s, string origin)
    {
        var url = $"/api/v1/sessions/{s.SessionId}";
        for (var i = 0; i < 50; i++)
        {
            var next = await Api.JsonAsync(await s.Annotator.GetAsync($"{url}/next"), 200);
            if (next["phase"]!.GetValue<string>() == "testing") return next;
            var item = next["item"]!;
            // Teaching items keep the owner's address: they are answered with feedback anyway.
            Assert.StartsWith($"{origin}/teach/", item["content"]!["imageUrl"]!.GetValue<string>(), StringComparison.Ordinal);
            await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"{url}/answers", new
            {
                step = next["step"]!.GetValue<int>(), itemRef = item["ref"]!.GetValue<string>(), label = TestApp.TruthOf(item),
            }), 200);
        }
        throw new InvalidOperationException("No test item was served.");
    }

    [Fact]
    public async Task A_test_items_image_comes_through_an_address_that_names_nothing_and_works_for_its_session_and_step_only()
    {
        await using var images = await ImageHost.StartAsync();
        using var app = new TestApp(AllowLoopback);
        var keys = await app.ReadyProjectAsync(items: ItemsWithImages(images.Origin));
        var s = await app.StartSessionAsync(keys, "first");
        var other = await app.StartSessionAsync(keys, "second");
        var step = await FirstTestStepAsync(s, images.Origin);
        var otherStep = await FirstTestStepAsync(other, images.Origin);

        var address = step["item"]!["content"]!["imageUrl"]!.GetValue<string>();
        var prefix = $"http://localhost/api/v1/sessions/{s.SessionId}/media/";
        Assert.StartsWith(prefix, address, StringComparison.Ordinal);
        var token = address[prefix.Length..];
        Assert.Matches("^[A-Za-z0-9_-]{22}$", token);
        foreach (var secret in new[] { "seam", "held", "test", "sound", "defect", "127.0.0.1", ".png", images.Origin })
            Assert.DoesNotContain(secret, token, StringComparison.OrdinalIgnoreCase);
        // The page gets the same address.
        var page = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/page"), 200);
        Assert.Equal(address, page["item"]!["imageUrl"]!.GetValue<string>());

        // No key needed (an <img> sends none): the bytes are the owner's image of the current item.
        var anonymous = app.Client();
        var response = await anonymous.GetAsync(address);
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal("image/png", response.Content.Headers.ContentType?.MediaType);
        Assert.Equal("no-store", response.Headers.CacheControl?.ToString());
        var fetched = images.Requests.Last();
        Assert.Equal($"/test/{TestApp.TruthOf(step["item"]!)}/", fetched[..(fetched.LastIndexOf('/') + 1)]);
        Assert.Equal(ImageHost.BodyFor(fetched), await response.Content.ReadAsByteArrayAsync());

        // Another session's address with this token, or a token one character off: 404 alike.
        var otherAddress = otherStep["item"]!["content"]!["imageUrl"]!.GetValue<string>();
        Assert.NotEqual(token, otherAddress[(otherAddress.LastIndexOf('/') + 1)..]);
        await Api.ProblemAsync(await anonymous.GetAsync($"/api/v1/sessions/{other.SessionId}/media/{token}"), 404);
        await Api.ProblemAsync(await anonymous.GetAsync(prefix + (token[0] == 'A' ? 'B' : 'A') + token[1..]), 404);
        await Api.ProblemAsync(await anonymous.GetAsync(prefix + "short"), 404);

        // Once the step is answered the address stops working.
        await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers", new
        {
            step = step["step"]!.GetValue<int>(), itemRef = step["item"]!["ref"]!.GetValue<string>(), label = "sound",
        }), 200);
        await Api.ProblemAsync(await anonymous.GetAsync(address), 404);

        // And an idle session's addresses stop with its token.
        app.Time.Advance(TimeSpan.FromHours(5));
        await Api.ProblemAsync(await anonymous.GetAsync(otherAddress), 404);
    }

    [Fact]
    public async Task Without_AllowPrivateNetworks_an_image_on_loopback_is_refused_with_403_and_never_fetched()
    {
        await using var images = await ImageHost.StartAsync();
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(items: ItemsWithImages(images.Origin));
        var s = await app.StartSessionAsync(keys);
        var step = await FirstTestStepAsync(s, images.Origin);
        var response = await app.Client().GetAsync(step["item"]!["content"]!["imageUrl"]!.GetValue<string>());
        var problem = await Api.ProblemAsync(response, 403);
        Assert.DoesNotContain("127.0.0.1", problem.ToJsonString(), StringComparison.Ordinal);
        Assert.DoesNotContain("seam", problem.ToJsonString(), StringComparison.Ordinal);
        Assert.Empty(images.Requests);
    }

    [Fact]
    public async Task Only_a_plain_image_within_the_size_cap_is_served_and_redirects_are_not_followed()
    {
        await using var images = await ImageHost.StartAsync();
        using var app = new TestApp(new(AllowLoopback) { ["TeachServe:Media:MaxBytes"] = (ImageHost.LargeBytes - 1).ToString(CultureInfo.InvariantCulture) });
        var keys = await app.ReadyProjectAsync(items: ItemsWithImages(images.Origin));
        var s = await app.StartSessionAsync(keys);
        var address = (await FirstTestStepAsync(s, images.Origin))["item"]!["content"]!["imageUrl"]!.GetValue<string>();
        var client = app.Client();
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync(address)).StatusCode);
        foreach (var mode in new[] { ImageHost.Behaviour.Large, ImageHost.Behaviour.Html, ImageHost.Behaviour.Svg, ImageHost.Behaviour.Redirect })
        {
            images.Mode = mode;
            await Api.ProblemAsync(await client.GetAsync(address), 502);
        }

        Assert.DoesNotContain("/redirected.png", images.Requests);
        images.Mode = ImageHost.Behaviour.Image;
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync(address)).StatusCode);
    }

    [Theory]
    [InlineData("127.0.0.1")]
    [InlineData("127.5.6.7")]
    [InlineData("10.0.0.1")]
    [InlineData("172.16.0.1")]
    [InlineData("172.31.255.254")]
    [InlineData("192.168.1.1")]
    [InlineData("169.254.169.254")]
    [InlineData("100.64.0.1")]
    [InlineData("0.0.0.0")]
    [InlineData("255.255.255.255")]
    [InlineData("224.0.0.1")]
    [InlineData("::")]
    [InlineData("::1")]
    [InlineData("fe80::1")]
    [InlineData("febf::1")]
    [InlineData("fc00::1")]
    [InlineData("fd12:3456::1")]
    [InlineData("ff02::1")]
    [InlineData("::ffff:127.0.0.1")]
    [InlineData("::ffff:10.1.2.3")]
    [InlineData("::ffff:169.254.169.254")]
    [InlineData("::127.0.0.1")]
    [InlineData("64:ff9b::a9fe:a9fe")]
    [InlineData("2002:c0a8:0101::1")]
    public void Loopback_private_link_local_and_unique_local_addresses_are_not_public(string address) =>
        Assert.False(NetworkGuard.IsPublic(IPAddress.Parse(address)));

    [Theory]
    [InlineData("93.184.216.34")]
    [InlineData("8.8.8.8")]
    [InlineData("172.32.0.1")]
    [InlineData("172.15.255.255")]
    [InlineData("192.169.0.1")]
    [InlineData("100.128.0.1")]
    [InlineData("2606:4700::1111")]
    [InlineData("::ffff:8.8.8.8")]
    [InlineData("64:ff9b::808:808")]
    public void Public_addresses_are_public(string address) =>
        Assert.True(NetworkGuard.IsPublic(IPAddress.Parse(address)));

    [Fact]
    public async Task The_guard_checks_names_when_it_connects()
    {
        // "localhost" resolves to loopback: refused before any socket is opened.
        var refused = await Assert.ThrowsAsync<RefusedAddressException>(async () =>
            await NetworkGuard.ConnectAsync(new DnsEndPoint("localhost", 9), allowPrivateNetworks: false, CancellationToken.None));
        Assert.Equal("localhost", refused.Host);
        await using var images = await ImageHost.StartAsync();
        var port = new Uri(images.Origin).Port;
        await using var allowed = await NetworkGuard.ConnectAsync(new DnsEndPoint("127.0.0.1", port), allowPrivateNetworks: true, CancellationToken.None);
        Assert.True(allowed.CanWrite);
    }
}
