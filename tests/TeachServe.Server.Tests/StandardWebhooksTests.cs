using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Tests;

/// <summary>
/// The server's signer and the tests' verifier against the published example of the Standard Webhooks reference
/// libraries: secret, id, timestamp, payload and expected signature from standard-webhooks/standard-webhooks
/// (commit b2fa7b8), libraries/csharp/StandardWebhooks.Tests/WebhookTest.cs, <c>verifyWebhookSignWorks</c>; the same
/// vector is in libraries/go/webhook_test.go, <c>TestWebhookSign</c>.
/// </summary>
public sealed class StandardWebhooksTests
{
    private const string Secret = "whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw";
    private const string Id = "msg_p5jXN8AQM9LWM0D4loKWxJek";
    private const long Timestamp = 1614265330;
    private const string Payload = "{\"test\": 2432232314}";
    private const string Expected = "v1,g0hM9SsE+OTPJTGt/tmIKtSyZlE3uFJELVlNIOLJ1OE=";
    private static readonly DateTimeOffset At = DateTimeOffset.FromUnixTimeSeconds(Timestamp);
    private static readonly TimeSpan Tolerance = TimeSpan.FromMinutes(5);

    [Fact]
    public void The_server_signs_the_reference_example_as_published()
    {
        Assert.True(WebhookSigningKey.TryParse(Secret, out var key));
        Assert.Equal(Expected, WebhookSignature.Sign(key, Id, Timestamp, Payload));
    }

    [Fact]
    public void The_test_verifier_accepts_the_reference_example_and_refuses_every_change()
    {
        Assert.True(Verify(Expected));
        Assert.True(Verify("v1a,bm90IGFuIGVkMjU1MTkgc2lnbmF0dXJl " + Expected), "a later matching entry of the list counts");
        Assert.False(Verify(Expected, payload: Payload.Replace('2', '3')));
        Assert.False(Verify(Expected, id: Id + "x"));
        Assert.False(Verify(Expected, secret: HookReceiver.Secret));
        Assert.False(Verify(Expected, timestamp: (Timestamp + 1).ToString(System.Globalization.CultureInfo.InvariantCulture)));
        Assert.False(Verify(Expected, now: At + Tolerance + TimeSpan.FromSeconds(1)), "a stale timestamp is refused");
        Assert.False(Verify(Expected, now: At - Tolerance - TimeSpan.FromSeconds(1)), "a timestamp from the future is refused");
        Assert.False(Verify("v2" + Expected[2..]));
        Assert.False(Verify(""));
        Assert.False(Verify(Expected, id: ""));
    }

    private static bool Verify(string signatures, string secret = Secret, string id = Id, string? timestamp = null, string payload = Payload, DateTimeOffset? now = null) =>
        StandardWebhooksVerifier.Verify(secret, id, timestamp ?? Timestamp.ToString(System.Globalization.CultureInfo.InvariantCulture),
            signatures, payload, now ?? At, Tolerance);

    [Theory]
    [InlineData(24, true)]
    [InlineData(32, true)]
    [InlineData(64, true)]
    [InlineData(23, false)]
    [InlineData(65, false)]
    public void A_secret_is_whsec_and_the_base64_of_24_to_64_bytes(int bytes, bool valid)
    {
        var secret = "whsec_" + Convert.ToBase64String(Enumerable.Range(0, bytes).Select(i => (byte)(i * 7 + 1)).ToArray());
        Assert.Equal(valid, WebhookSigningKey.TryParse(secret, out var key));
        if (valid) Assert.Equal(bytes, key.Length);
    }

    [Theory]
    [InlineData("MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaSw")]            // no prefix
    [InlineData("whsec_")]
    [InlineData("whsec_MfKQ9r8GKYqrTwjU PD8ILPZIo2LaLaSw")]     // a space, which the .NET decoder would skip
    [InlineData("whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaS-")]      // base64url is not the specification's form
    [InlineData("whsec_MfKQ9r8GKYqrTwjUPD8ILPZIo2LaLaS")]       // truncated
    [InlineData("a-long-plain-password-of-the-old-kind")]
    public void Anything_else_is_not_a_secret(string secret) => Assert.False(WebhookSigningKey.TryParse(secret, out _));

    [Fact]
    public void A_secret_of_an_older_server_keys_with_its_UTF8_bytes()
    {
        const string old = "an-older-secret-ü";
        Assert.Equal(System.Text.Encoding.UTF8.GetBytes(old), WebhookSigningKey.Of(old));
        Assert.True(WebhookSigningKey.TryParse(Secret, out var key));
        Assert.Equal(key, WebhookSigningKey.Of(Secret));
    }
}
