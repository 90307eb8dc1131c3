using System.Globalization;
using System.Net.Mime;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using CloudNative.CloudEvents;
using CloudNative.CloudEvents.SystemTextJson;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Tests;

public sealed class WebhookTests
{
    private static readonly TimeSpan Tolerance = TimeSpan.FromMinutes(5);

    private static JsonObject WithHook(string url) => HookReceiver.ProjectWithHook(url);

    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    private static bool Verified(HookReceiver.Delivery d, TestApp app, string secret = HookReceiver.Secret) =>
        StandardWebhooksVerifier.Verify(secret, d.Id, d.Timestamp, d.Signature, d.Body, app.Time.GetUtcNow(), Tolerance);

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
        Assert.True(Verified(first, app));
        await dispatcher.Idle;
        app.Time.Advance(TimeSpan.FromSeconds(10));
        var second = await receiver.NextAsync();
        Assert.Equal(200, second.AnsweredWith);
        // Standard Webhooks, "Webhook metadata": a retry keeps the message's id and carries its own attempt's
        // timestamp; the body is the stored one, byte for byte.
        Assert.Equal(first.Id, second.Id);
        Assert.Equal(first.Body, second.Body);
        Assert.Equal(long.Parse(first.Timestamp!, CultureInfo.InvariantCulture) + 10, long.Parse(second.Timestamp!, CultureInfo.InvariantCulture));
        Assert.Equal("org.teachserve.session.released", second.Type);
        Assert.True(Verified(second, app));
        Assert.False(Verified(second, app, "whsec_" + Convert.ToBase64String(new byte[32])));
        Assert.False(Verified(second with { Timestamp = first.Timestamp }, app), "the timestamp is signed");
        Assert.False(Verified(second with { Body = second.Body.Replace("released", "failed", StringComparison.Ordinal) }, app));
        Assert.Equal(s.SessionId, second.Data["sessionId"]!.GetValue<string>());
        Assert.Equal("released", second.Data["phase"]!.GetValue<string>());

        await dispatcher.Idle;
        using var scope = app.Services.CreateScope();
        var row = await scope.ServiceProvider.GetRequiredService<TeachServeDb>().Outbox.AsNoTracking().SingleAsync();
        Assert.Equal(OutboxStates.Delivered, row.State);
        Assert.Equal(2, row.Attempts);
    }

    [Fact]
    public async Task A_delivery_is_one_CloudEvent_that_the_CNCF_SDK_reads()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(WithHook(receiver.Url));
        var s = await app.StartSessionAsync(keys, "annotator-7");
        await TestApp.RunAsync(s, Honest);
        var delivery = await receiver.NextAsync();
        var evidence = await app.EvidenceAsync(keys, s.SessionId);

        // cloudevents/spec v1.0.2, bindings/http-protocol-binding.md §3.2.1 and formats/json-format.md §3.
        var contentType = new ContentType(delivery.ContentType!);
        Assert.Equal("application/cloudevents+json", contentType.MediaType);
        var cloudEvent = new JsonEventFormatter().DecodeStructuredModeMessage(Encoding.UTF8.GetBytes(delivery.Body), contentType, null);
        Assert.True(cloudEvent.IsValid);
        Assert.Equal(CloudEventsSpecVersion.V1_0, cloudEvent.SpecVersion);
        Assert.Equal(delivery.Id, cloudEvent.Id);
        Assert.Equal($"/projects/{keys.ProjectId}", cloudEvent.Source!.OriginalString);
        Assert.Equal("org.teachserve.session.released", cloudEvent.Type);
        Assert.Equal(s.SessionId, cloudEvent.Subject);
        Assert.Equal(app.Time.GetUtcNow(), cloudEvent.Time);
        Assert.Equal("application/json", cloudEvent.DataContentType);
        var data = JsonNode.Parse(Assert.IsType<JsonElement>(cloudEvent.Data).GetRawText())!;
        Assert.Equal(keys.ProjectId, data["projectId"]!.GetValue<string>());
        Assert.Equal(s.SessionId, data["sessionId"]!.GetValue<string>());
        Assert.Equal("annotator-7", data["workerRef"]!.GetValue<string>());
        Assert.Equal("released", data["phase"]!.GetValue<string>());
        Assert.Equal(1, data["modelVersion"]!.GetValue<int>());
        Assert.Equal(evidence!.ToJsonString(), data["evidence"]!.ToJsonString());
        Assert.True(Verified(delivery, app));
    }

    [Fact]
    public async Task Without_AllowPrivateNetworks_a_receiver_on_loopback_is_refused_and_never_reached()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp(new() { ["TeachServe:Webhooks:AllowPrivateNetworks"] = "false" });
        var keys = await app.ReadyProjectAsync(WithHook(receiver.Url));
        var dispatcher = app.Service<OutboxDispatcher>();
        await TestApp.RunAsync(await app.StartSessionAsync(keys), Honest);

        // No delivery arrives to wait for: wait for the dispatcher's passes until one has recorded the attempt (Idle
        // may still be the task of the pass before the session ended).
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        OutboxMessage row;
        var passes = 0;
        do
        {
            Assert.True(++passes < 10_000, "The dispatcher made no attempt.");
            await dispatcher.Idle;
            await Task.Yield();
            row = await db.Outbox.AsNoTracking().SingleAsync();
        }
        while (row.LastError is null); // a claimed row counts its attempt before the attempt ends
        Assert.Equal(OutboxStates.Pending, row.State);
        Assert.Equal(1, row.Attempts);
        Assert.Contains("not a public address", row.LastError, StringComparison.Ordinal);
        Assert.Contains("TeachServe:Webhooks:AllowPrivateNetworks", row.LastError, StringComparison.Ordinal);
        Assert.False(receiver.TryTake(out _));
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
        Assert.Equal("org.teachserve.session.failed", delivery.Type);
        Assert.Equal("failed", delivery.Data["phase"]!.GetValue<string>());
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
            // A claimed row counts its attempt before the attempt ends; wait until the failure is recorded (the row's
            // lease is then replaced by the retry time, which the clock below passes).
            while (await db.Outbox.AsNoTracking().AnyAsync(m => m.LastError == null)) await dispatcher.Idle.WaitAsync(TimeSpan.FromSeconds(30));
            Assert.Equal(OutboxStates.Pending, (await db.Outbox.AsNoTracking().SingleAsync()).State);
        }

        await using var receiver = await HookReceiver.StartAsync(port);
        time.Advance(TimeSpan.FromMinutes(1));
        using (var restarted = new TestApp(dataDirectory: dir, time: time))
        {
            restarted.Client();
            var delivery = await receiver.NextAsync();
            Assert.Equal(sessionId, delivery.Data["sessionId"]!.GetValue<string>());
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
        Assert.False(receiver.TryTake(out var twice), $"posted twice: message {twice?.Id}");
        var lease = OutboxDispatcher.ClaimLease(app.Service<IOptions<TeachServeOptions>>().Value.Webhooks);
        Assert.Equal(app.Time.GetUtcNow() + lease, nextDue);
        hold.SetResult();
        await dispatcher.Idle;
        var row = await OutboxRowAsync(app);
        Assert.Equal(first.Id, row.DeliveryId);
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
        Assert.Equal(first.Id, second.Id);
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
