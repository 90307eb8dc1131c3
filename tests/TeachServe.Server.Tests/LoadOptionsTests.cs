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

    [Fact]
    public void The_live_checks_mode_takes_a_batch_size_and_a_number_of_released_annotators()
    {
        var options = LoadOptions.Parse([.. Base, "--mode", "live-checks", "--batch", "50", "--released", "128", "--rate", "2000"]);
        Assert.Equal(LoadMode.LiveChecks, options.Mode);
        Assert.Equal(50, options.BatchSize);
        Assert.Equal(128, options.ReleasedCount);
        Assert.Equal(2000, options.Rate);
        var defaults = LoadOptions.Parse([.. Base, "--mode", "live-checks"]);
        Assert.Equal((LoadOptions.DefaultBatch, LoadOptions.DefaultReleased), (defaults.BatchSize, defaults.ReleasedCount));
        Assert.Equal(LoadMode.Sessions, LoadOptions.Parse(Base).Mode);
    }

    [Theory]
    [InlineData("--mode", "outcomes", "--mode")]
    [InlineData("--batch", "0", "--batch must be 1 to 1000")]
    [InlineData("--batch", "1001", "--batch must be 1 to 1000")]
    [InlineData("--released", "63", "--released must be at least --annotators")]
    [InlineData("--released", "10001", "--released must be at least --annotators")]
    [InlineData("--webhook", "http://127.0.0.1:5095/hook", "--webhook is for --mode sessions")]
    public void Live_checks_options_out_of_range_are_refused(string option, string value, string message)
    {
        string[] args = option == "--mode" ? [.. Base, option, value] : [.. Base, "--mode", "live-checks", option, value];
        var refused = Assert.Throws<ArgumentException>(() => LoadOptions.Parse(args));
        Assert.Contains(message, refused.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Live_checks_need_the_harness_own_project_and_batch_needs_the_mode()
    {
        var own = Assert.Throws<ArgumentException>(() => LoadOptions.Parse(
            ["--url", "http://127.0.0.1:5090", "--project", "prj_x", "--embed-key", "tse.x", "--mode", "live-checks"]));
        Assert.Contains("--admin-key", own.Message, StringComparison.Ordinal);
        var mode = Assert.Throws<ArgumentException>(() => LoadOptions.Parse([.. Base, "--batch", "10"]));
        Assert.Contains("--mode live-checks", mode.Message, StringComparison.Ordinal);
    }
}
