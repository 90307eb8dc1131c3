using TeachServe.Load;

namespace TeachServe.Server.Tests;

/// <summary>The load harness only ever talks to this machine, webhook receivers included.</summary>
public sealed class LoadOptionsTests
{
    private static readonly string[] Base = ["--url", "http://127.0.0.1:5090", "--admin-key", "tsa.load-admin-key-0123456789abcdef"];

    [Fact]
    public void A_loopback_webhook_is_accepted_for_the_harness_project()
    {
        var options = LoadOptions.Parse([.. Base, "--webhook", "http://127.0.0.1:5095/hook"]);
        Assert.Equal(new Uri("http://127.0.0.1:5095/hook"), options.Webhook);
    }

    [Theory]
    [InlineData("http://192.0.2.10/hook")]
    [InlineData("http://receiver.example/hook")]
    public void A_webhook_off_this_machine_is_refused(string url)
    {
        var refused = Assert.Throws<ArgumentException>(() => LoadOptions.Parse([.. Base, "--webhook", url]));
        Assert.Contains("loopback", refused.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void A_webhook_needs_the_harness_own_project()
    {
        var refused = Assert.Throws<ArgumentException>(() => LoadOptions.Parse(
            ["--url", "http://127.0.0.1:5090", "--project", "prj_x", "--embed-key", "tse.x", "--webhook", "http://127.0.0.1:5095/hook"]));
        Assert.Contains("--admin-key", refused.Message, StringComparison.Ordinal);
    }
}
