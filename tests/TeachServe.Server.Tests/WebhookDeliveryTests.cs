using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Tests;

/// <summary>Concurrent delivery: a receiver that never answers holds only its own project's webhooks.</summary>
public sealed class WebhookDeliveryTests
{
    private static JsonObject WithHook(string url) => HookReceiver.ProjectWithHook(url);

    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    [Fact]
    public async Task A_stalled_receiver_does_not_delay_another_projects_release_webhook()
    {
        await using var stalled = await HookReceiver.StartAsync();
        await using var healthy = await HookReceiver.StartAsync();
        // A request timeout far beyond the receivers' 30 s wait: delivering one after another would make the
        // healthy receiver wait for it, and the test fail.
        using var app = new TestApp(new Dictionary<string, string?> { ["TeachServe:Webhooks:RequestTimeout"] = "00:30:00" });
        var hold = stalled.HoldNext();
        try
        {
            var a = await app.ReadyProjectAsync(WithHook(stalled.Url));
            var b = await app.ReadyProjectAsync(WithHook(healthy.Url));
            await TestApp.RunAsync(await app.StartSessionAsync(a, "worker-a"), Honest);
            await stalled.Held;

            await TestApp.RunAsync(await app.StartSessionAsync(b, "worker-b"), Honest);
            var delivery = await healthy.NextAsync();
            Assert.Equal(b.ProjectId, delivery.Data["projectId"]!.GetValue<string>());
            Assert.Equal(200, delivery.AnsweredWith);
            Assert.False(hold.Task.IsCompleted);
        }
        finally
        {
            hold.TrySetResult();
        }
    }

    [Fact]
    public async Task Delivery_ids_are_random_per_message_not_a_counter()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(WithHook(receiver.Url));
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "w-1"), Honest);
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "w-2"), Honest);
        var ids = new[] { (await receiver.NextAsync()).Id!, (await receiver.NextAsync()).Id! };
        Assert.NotEqual(ids[0], ids[1]);
        Assert.All(ids, id => Assert.Matches("^dlv_[0-9a-hjkmnp-tv-z]{26}$", id));
    }

    private static readonly WebhookOptions Settings = new() { MaxConcurrentPerDestination = 2, BreakerFailures = 3, BreakerCooldown = TimeSpan.FromMinutes(1) };

    [Fact]
    public void A_destination_takes_at_most_its_cap_of_attempts_at_once()
    {
        var gates = new DestinationGates(Settings, new FakeTimeProvider());
        var a = DestinationGates.DestinationOf("https://hooks.example:8443/a");
        Assert.Equal(a, DestinationGates.DestinationOf("https://HOOKS.example:8443/other/path"));
        Assert.NotEqual(a, DestinationGates.DestinationOf("https://hooks.example/a"));
        Assert.Equal(Admission.Go, gates.TryEnter(a));
        Assert.Equal(Admission.Go, gates.TryEnter(a));
        Assert.Equal(Admission.Busy, gates.TryEnter(a));
        Assert.Equal(Admission.Go, gates.TryEnter("https://other.example:443"));
        gates.Exit(a, succeeded: true);
        Assert.Equal(Admission.Go, gates.TryEnter(a));
    }

    [Fact]
    public void The_circuit_opens_after_consecutive_failures_and_lets_one_trial_through_after_the_cool_down()
    {
        var time = new FakeTimeProvider(new DateTimeOffset(2026, 1, 5, 9, 0, 0, TimeSpan.Zero));
        var gates = new DestinationGates(Settings, time);
        const string d = "http://127.0.0.1:9";
        for (var i = 0; i < 2; i++)
        {
            Assert.Equal(Admission.Go, gates.TryEnter(d));
            gates.Exit(d, succeeded: false);
        }
        // A success in between resets the count.
        Assert.Equal(Admission.Go, gates.TryEnter(d));
        gates.Exit(d, succeeded: true);
        for (var i = 0; i < 3; i++)
        {
            Assert.Equal(Admission.Go, gates.TryEnter(d));
            gates.Exit(d, succeeded: false);
        }
        Assert.Equal(Admission.Open, gates.TryEnter(d));
        Assert.Equal(time.GetUtcNow() + TimeSpan.FromMinutes(1), gates.OpenUntil(d));

        time.Advance(TimeSpan.FromMinutes(1));
        Assert.Equal(Admission.Go, gates.TryEnter(d));
        Assert.Equal(Admission.Busy, gates.TryEnter(d));
        gates.Exit(d, succeeded: false);
        Assert.Equal(Admission.Open, gates.TryEnter(d));

        time.Advance(TimeSpan.FromMinutes(1));
        Assert.Equal(Admission.Go, gates.TryEnter(d));
        gates.Exit(d, succeeded: true);
        Assert.Null(gates.OpenUntil(d));
        Assert.Equal(Admission.Go, gates.TryEnter(d));
        Assert.Equal(Admission.Go, gates.TryEnter(d));
    }

    [Fact]
    public async Task Rows_of_an_open_circuit_wait_for_the_cool_down_without_spending_attempts()
    {
        await using var receiver = await HookReceiver.StartAsync(0, 503, 503, 503);
        using var app = new TestApp(new Dictionary<string, string?>
        {
            ["TeachServe:Webhooks:BreakerFailures"] = "1",
            ["TeachServe:Webhooks:BreakerCooldown"] = "00:10:00",
            ["TeachServe:Webhooks:InitialBackoff"] = "00:00:10",
        });
        var keys = await app.ReadyProjectAsync(WithHook(receiver.Url));
        var dispatcher = app.Service<OutboxDispatcher>();
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "w-1"), Honest);
        Assert.Equal(503, (await receiver.NextAsync()).AnsweredWith);
        await dispatcher.Idle;

        // The retry falls due after 10 s, but the circuit is open for 10 min: no post, no attempt counted.
        var failedAt = app.Time.GetUtcNow();
        app.Time.Advance(TimeSpan.FromSeconds(10));
        // This pass or the background one (its timer fell due too) defers the row; wait until one has.
        await dispatcher.DeliverDueAsync(CancellationToken.None);
        var row = await OutboxRowAsync(app);
        while (row.NextAttemptAt == failedAt + TimeSpan.FromSeconds(10))
        {
            await dispatcher.Idle.WaitAsync(TimeSpan.FromSeconds(30));
            row = await OutboxRowAsync(app);
        }
        Assert.Equal(failedAt + TimeSpan.FromMinutes(10), row.NextAttemptAt);
        Assert.Equal(1, row.Attempts);
        Assert.Equal(OutboxStates.Pending, row.State);
        Assert.False(receiver.TryTake(out var early), $"posted while open: {early?.Id}");

        // After the cool-down one trial goes through.
        app.Time.Advance(TimeSpan.FromMinutes(10));
        await dispatcher.DeliverDueAsync(CancellationToken.None);
        Assert.Equal(503, (await receiver.NextAsync()).AnsweredWith);
        Assert.Equal(2, (await OutboxRowAsync(app)).Attempts);
    }

    private static async Task<OutboxMessage> OutboxRowAsync(TestApp app)
    {
        using var scope = app.Services.CreateScope();
        return await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Outbox.AsNoTracking().SingleAsync();
    }
}
