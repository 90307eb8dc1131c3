using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Tests;

public sealed class WebhookTests
{
    private const string Secret = "whsec-0123456789abcdef";

    private static JsonObject WithHook(string url)
    {
        var project = TestApp.ProjectJson();
        project["releaseWebhook"] = new JsonObject { ["url"] = url, ["secret"] = Secret };
        return project;
    }

    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    [Fact]
    public async Task Release_is_posted_signed_and_retried_with_backoff()
    {
        await using var receiver = await HookReceiver.StartAsync(0, 503);
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(WithHook(receiver.Url));
        var s = await app.StartSessionAsync(keys);
        var dispatcher = app.Service<OutboxDispatcher>();
        await TestApp.RunAsync(s, Honest);

        var first = await receiver.NextAsync();
        Assert.Equal(503, first.AnsweredWith);
        await dispatcher.Idle;
        app.Time.Advance(TimeSpan.FromSeconds(10));
        var second = await receiver.NextAsync();
        Assert.Equal(200, second.AnsweredWith);
        Assert.Equal(first.DeliveryId, second.DeliveryId);
        Assert.Equal("session.released", second.EventType);
        Assert.True(WebhookSignature.Verify(second.Signature!, Secret, second.Body, app.Time.GetUtcNow(), TimeSpan.FromMinutes(5)));
        Assert.False(WebhookSignature.Verify(second.Signature!, "another-secret-xyz", second.Body, app.Time.GetUtcNow(), TimeSpan.FromMinutes(5)));
        var payload = JsonNode.Parse(second.Body)!;
        Assert.Equal(s.SessionId, payload["sessionId"]!.GetValue<string>());
        Assert.Equal("released", payload["phase"]!.GetValue<string>());

        await dispatcher.Idle;
        using var scope = app.Services.CreateScope();
        var row = await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Outbox.AsNoTracking().SingleAsync();
        Assert.Equal(OutboxStates.Delivered, row.State);
        Assert.Equal(2, row.Attempts);
    }

    [Fact]
    public async Task Failed_sessions_are_posted_too()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(WithHook(receiver.Url));
        var s = await app.StartSessionAsync(keys);
        await TestApp.RunAsync(s, (item, phase) => phase == "testing" ? (TestApp.TruthOf(item) == "sound" ? "defect" : "sound") : TestApp.TruthOf(item));
        var delivery = await receiver.NextAsync();
        Assert.Equal("session.failed", delivery.EventType);
    }

    [Fact]
    public async Task Undelivered_webhooks_survive_a_restart()
    {
        var port = HookReceiver.FreePort();
        var dir = TestApp.NewDataDirectory();
        var time = new Microsoft.Extensions.Time.Testing.FakeTimeProvider(new DateTimeOffset(2026, 1, 5, 9, 0, 0, TimeSpan.Zero));
        string sessionId;
        using (var app = new TestApp(dataDirectory: dir, time: time))
        {
            // Nobody listens on the port yet: the attempt fails and the row stays pending.
            var keys = await app.ReadyProjectAsync(WithHook($"http://127.0.0.1:{port}/hook"));
            var s = await app.StartSessionAsync(keys);
            sessionId = s.SessionId;
            await TestApp.RunAsync(s, Honest);
            var dispatcher = app.Service<OutboxDispatcher>();
            using var scope = app.Services.CreateScope();
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            while (await db.Outbox.AsNoTracking().AnyAsync(m => m.Attempts == 0)) await dispatcher.Idle.WaitAsync(TimeSpan.FromSeconds(30));
            Assert.Equal(OutboxStates.Pending, (await db.Outbox.AsNoTracking().SingleAsync()).State);
        }

        await using var receiver = await HookReceiver.StartAsync(port);
        time.Advance(TimeSpan.FromMinutes(1));
        using (var restarted = new TestApp(dataDirectory: dir, time: time))
        {
            restarted.Client();
            var delivery = await receiver.NextAsync();
            Assert.Equal(sessionId, JsonNode.Parse(delivery.Body)!["sessionId"]!.GetValue<string>());
        }
        Microsoft.Data.Sqlite.SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    // Several nodes run a dispatcher each against one database. In these tests a direct call of
    // DeliverDueAsync stands for the other node's pass, while the app's own background pass holds a claim.

    [Fact]
    public async Task A_row_being_delivered_by_one_pass_is_not_posted_again_by_another()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var (hold, dispatcher) = await ReleaseWithHeldDeliveryAsync(app, receiver);

        var nextDue = await dispatcher.DeliverDueAsync(CancellationToken.None);

        var first = await receiver.NextAsync();
        Assert.False(receiver.TryTake(out var twice), $"posted twice: delivery {twice?.DeliveryId}");
        var lease = OutboxDispatcher.ClaimLease(app.Service<IOptions<TeachServeOptions>>().Value.Webhooks);
        Assert.Equal(app.Time.GetUtcNow() + lease, nextDue);
        hold.SetResult();
        await dispatcher.Idle;
        var row = await OutboxRowAsync(app);
        Assert.Equal(first.DeliveryId, row.Id.ToString(System.Globalization.CultureInfo.InvariantCulture));
        Assert.Equal(OutboxStates.Delivered, row.State);
        Assert.Equal(1, row.Attempts);
    }

    [Fact]
    public async Task A_claim_left_by_a_dead_pass_is_retried_after_its_lease_and_its_late_result_is_ignored()
    {
        await using var receiver = await HookReceiver.StartAsync(0, 503);
        using var app = new TestApp();
        var (hold, dispatcher) = await ReleaseWithHeldDeliveryAsync(app, receiver);
        var first = await receiver.NextAsync();

        // The held pass stands for a node that stopped mid-delivery: the row is out of reach until its lease ends.
        var lease = OutboxDispatcher.ClaimLease(app.Service<IOptions<TeachServeOptions>>().Value.Webhooks);
        await dispatcher.DeliverDueAsync(CancellationToken.None);
        Assert.False(receiver.TryTake(out _));
        app.Time.Advance(lease + TimeSpan.FromSeconds(1));
        await dispatcher.DeliverDueAsync(CancellationToken.None);
        var second = await receiver.NextAsync();
        Assert.Equal(first.DeliveryId, second.DeliveryId);
        Assert.Equal(200, second.AnsweredWith);

        // The first pass now gets its 503; recording it would put a delivered row back to pending.
        hold.SetResult();
        await dispatcher.Idle;
        var row = await OutboxRowAsync(app);
        Assert.Equal(OutboxStates.Delivered, row.State);
        Assert.Equal(2, row.Attempts);
        Assert.Equal(app.Time.GetUtcNow(), row.DeliveredAt);
        Assert.Null(row.LastError);
    }

    /// <summary>Releases one annotator; returns once the app's background pass has posted the release and is waiting for the answer.</summary>
    private static async Task<(TaskCompletionSource Hold, OutboxDispatcher Dispatcher)> ReleaseWithHeldDeliveryAsync(TestApp app, HookReceiver receiver)
    {
        var hold = receiver.HoldNext();
        var keys = await app.ReadyProjectAsync(WithHook(receiver.Url));
        var s = await app.StartSessionAsync(keys);
        var dispatcher = app.Service<OutboxDispatcher>();
        await TestApp.RunAsync(s, Honest);
        await receiver.Held;
        return (hold, dispatcher);
    }

    private static async Task<OutboxMessage> OutboxRowAsync(TestApp app)
    {
        using var scope = app.Services.CreateScope();
        return await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Outbox.AsNoTracking().SingleAsync();
    }

    [Fact]
    public void Backoff_doubles_up_to_the_cap()
    {
        var o = new WebhookOptions { InitialBackoff = TimeSpan.FromSeconds(10), MaxBackoff = TimeSpan.FromMinutes(5) };
        Assert.Equal(TimeSpan.FromSeconds(10), OutboxDispatcher.Backoff(1, o));
        Assert.Equal(TimeSpan.FromSeconds(40), OutboxDispatcher.Backoff(3, o));
        Assert.Equal(TimeSpan.FromMinutes(5), OutboxDispatcher.Backoff(12, o));
    }
}
