using System.Text;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// Delivers outbox rows at least once: a row leaves the pending state only after a 2xx answer (or after the
/// last attempt). Failed attempts are retried with exponential backoff; rows survive restarts because they
/// live in the database. Delivery ids (random per message, kept across retries) let receivers drop duplicates.
/// </summary>
/// <remarks>
/// Deliveries run concurrently: a pass claims the due rows it may post now and starts each attempt without
/// waiting for the others, so one receiver that never answers holds only its own rows. Per destination (scheme,
/// host, port) at most <c>MaxConcurrentPerDestination</c> attempts are in flight on a node, and a destination that
/// keeps failing is skipped by a circuit breaker (<see cref="DestinationGates"/>): its due rows are moved to the end
/// of the cool-down without counting an attempt. Rows of a destination at its cap stay due and are taken up when
/// one of its attempts ends.
/// <para>
/// Several nodes run a dispatcher each against one database. Before posting, a node claims each row with a
/// conditional UPDATE (the attempt counter it read, still pending, still due) that counts the attempt and moves the
/// row's next attempt a lease ahead; of two nodes that read the same due row, only one claims it. A result is
/// written only while the claim is still the row's latest attempt. A node that dies mid-delivery leaves its rows
/// pending: they fall due again when the lease ends, so nothing is lost.
/// </para>
/// </remarks>
public sealed partial class OutboxDispatcher(
    IServiceScopeFactory scopes,
    IHttpClientFactory httpClients,
    TimeProvider time,
    IOptions<TeachServeOptions> options,
    OutboxSignal signal,
    WebhookSecrets secrets,
    ILogger<OutboxDispatcher> logger) : BackgroundService
{
    public const string HttpClientName = "webhooks";
    private const int BatchSize = 20;
    private TaskCompletionSource _idle = new(TaskCreationOptions.RunContinuationsAsynchronously);
    private readonly DestinationGates _gates = new(options.Value.Webhooks, time);
    private readonly System.Collections.Concurrent.ConcurrentDictionary<Task, byte> _running = new();
    private int _inFlight;

    /// <summary>Completes when the dispatcher has nothing due, no attempt in flight, and its timer armed (for tests that then move the clock).</summary>
    public Task Idle => Volatile.Read(ref _idle).Task;

    /// <summary>Per-destination caps and circuit breakers of this node.</summary>
    public DestinationGates Gates => _gates;

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        var settings = options.Value.Webhooks;
        while (!stoppingToken.IsCancellationRequested)
        {
            TimeSpan wait;
            try
            {
                var (nextDue, _) = await StartDueAsync(stoppingToken);
                wait = nextDue is { } due ? Clamp(due - time.GetUtcNow(), settings.PollInterval) : settings.PollInterval;
            }
            catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
            {
                break;
            }
            catch (Exception e)
            {
                LogPassFailed(logger, e);
                wait = settings.PollInterval;
            }
            if (wait <= TimeSpan.Zero) continue;
            try
            {
                // An attempt that ends notifies the signal, so a retry it schedules is seen without waiting for the poll.
                await signal.WaitAsync(wait, time, () =>
                {
                    if (Volatile.Read(ref _inFlight) == 0) Volatile.Read(ref _idle).TrySetResult();
                }, stoppingToken);
            }
            catch (OperationCanceledException)
            {
                break;
            }
            // A waiter of the current Idle keeps waiting for the next idle moment if this one did not come.
            if (Volatile.Read(ref _idle).Task.IsCompleted)
                Volatile.Write(ref _idle, new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously));
        }
        // Attempts in flight end with the host's cancellation; their rows stay leased and fall due again.
        try { await Task.WhenAll(_running.Keys); } catch (Exception) when (stoppingToken.IsCancellationRequested) { }
    }

    /// <summary>
    /// Attempts every due row this node may post now (those it claims), waits for those attempts, and returns when
    /// the next pending row falls due, if any. The background loop uses <see cref="StartDueAsync"/>, which does not wait.
    /// </summary>
    public async Task<DateTimeOffset?> DeliverDueAsync(CancellationToken ct)
    {
        var (nextDue, started) = await StartDueAsync(ct);
        await Task.WhenAll(started);
        return nextDue;
    }

    /// <summary>Claims the due rows this node may post now and starts their attempts; returns the next due time and the attempts started.</summary>
    public async Task<(DateTimeOffset? NextDue, List<Task> Started)> StartDueAsync(CancellationToken ct)
    {
        var settings = options.Value.Webhooks;
        var started = new List<Task>();
        // URLs whose destination takes no more attempts now; their rows stay due until an attempt there ends.
        var waiting = new List<string>();
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        while (Volatile.Read(ref _inFlight) < settings.MaxConcurrentDeliveries)
        {
            var now = time.GetUtcNow();
            var due = await db.Outbox.AsNoTracking()
                .Where(m => m.State == OutboxStates.Pending && m.NextAttemptAt <= now && !waiting.Contains(m.Url))
                .OrderBy(m => m.NextAttemptAt).ThenBy(m => m.Id).Take(BatchSize).ToListAsync(ct);
            if (due.Count == 0) break;

            var admitted = new List<OutboxMessage>();
            var deferred = new List<(OutboxMessage Message, DateTimeOffset Until)>();
            foreach (var message in due)
            {
                var destination = DestinationGates.DestinationOf(message.Url);
                if (waiting.Contains(message.Url)) continue;
                if (Volatile.Read(ref _inFlight) + admitted.Count >= settings.MaxConcurrentDeliveries)
                {
                    waiting.Add(message.Url);
                    continue;
                }
                switch (_gates.TryEnter(destination))
                {
                    case Admission.Go:
                        admitted.Add(message);
                        break;
                    case Admission.Open:
                        deferred.Add((message, _gates.OpenUntil(destination) ?? now));
                        break;
                    default:
                        waiting.Add(message.Url);
                        break;
                }
            }
            if (admitted.Count == 0 && deferred.Count == 0) continue;

            var claimed = await ClaimAsync(db, admitted, deferred, ct);
            foreach (var message in admitted.Where(m => !claimed.Contains(m)))
                _gates.Exit(DestinationGates.DestinationOf(message.Url), succeeded: null);
            if (claimed.Count == 0) continue;
            var projectIds = claimed.Select(m => m.ProjectId).Distinct().ToList();
            var stored = await db.Projects.AsNoTracking().Where(p => projectIds.Contains(p.Id))
                .ToDictionaryAsync(p => p.Id, p => p.WebhookSecret, ct);
            foreach (var message in claimed)
            {
                Interlocked.Increment(ref _inFlight);
                var attempt = Task.Run(() => DeliverAsync(message, stored.GetValueOrDefault(message.ProjectId), ct), CancellationToken.None);
                _running.TryAdd(attempt, 0);
                _ = attempt.ContinueWith(t => _running.TryRemove(t, out _), TaskScheduler.Default);
                started.Add(attempt);
            }
        }
        var next = await db.Outbox.Where(m => m.State == OutboxStates.Pending && !waiting.Contains(m.Url))
            .MinAsync(m => (DateTimeOffset?)m.NextAttemptAt, ct);
        return (next, started);
    }

    /// <summary>
    /// How long claimed rows stay out of other passes: longer than one attempt can take (each claimed row is posted
    /// at once, bounded by the request timeout).
    /// </summary>
    public static TimeSpan ClaimLease(WebhookOptions settings) => settings.RequestTimeout + TimeSpan.FromMinutes(1);

    /// <summary>One attempt and its result; never throws (a failure to record leaves the row to fall due after its lease).</summary>
    private async Task DeliverAsync(OutboxMessage message, string? storedSecret, CancellationToken ct)
    {
        var destination = DestinationGates.DestinationOf(message.Url);
        bool? succeeded = null;
        try
        {
            var outcome = await AttemptAsync(message, storedSecret, ct);
            succeeded = outcome.State == OutboxStates.Delivered;
            using var scope = scopes.CreateScope();
            await RecordAsync(scope.ServiceProvider.GetRequiredService<TeachServeDb>(), [(message, outcome)], ct);
        }
        catch (OperationCanceledException) when (ct.IsCancellationRequested)
        {
        }
        catch (Exception e)
        {
            LogRecordFailed(logger, e, message.Id);
        }
        finally
        {
            _gates.Exit(destination, succeeded);
            Interlocked.Decrement(ref _inFlight);
            signal.Notify();
        }
    }

    /// <summary>
    /// In one transaction, for each row no other pass has claimed since it was read: count the attempt and move
    /// the row a lease ahead. Returns the rows this pass holds, each carrying its claimed attempt number. Deferred rows
    /// (their destination's circuit is open) move to the end of the cool-down, no attempt counted.
    /// </summary>
    private async Task<HashSet<OutboxMessage>> ClaimAsync(
        TeachServeDb db, List<OutboxMessage> due, List<(OutboxMessage Message, DateTimeOffset Until)> deferred, CancellationToken ct)
    {
        var now = time.GetUtcNow();
        var leaseEnd = now + ClaimLease(options.Value.Webhooks);
        var claimed = new HashSet<OutboxMessage>();
        await using var transaction = await db.Database.BeginTransactionAsync(ct);
        // In id order, so that two nodes claiming overlapping batches lock the rows in the same order.
        foreach (var (message, until) in due.Select(m => (m, (DateTimeOffset?)null)).Concat(deferred.Select(d => (d.Message, (DateTimeOffset?)d.Until))).OrderBy(x => x.Item1.Id))
        {
            var seen = message.Attempts;
            var row = db.Outbox.Where(m => m.Id == message.Id && m.State == OutboxStates.Pending && m.Attempts == seen && m.NextAttemptAt <= now);
            if (until is { } openUntil)
            {
                await row.ExecuteUpdateAsync(u => u.SetProperty(m => m.NextAttemptAt, openUntil)
                    .SetProperty(m => m.LastError, "Not attempted: the destination's circuit is open after repeated failures."), ct);
                continue;
            }
            var rows = await row.ExecuteUpdateAsync(u => u.SetProperty(m => m.Attempts, seen + 1).SetProperty(m => m.NextAttemptAt, leaseEnd), ct);
            if (rows == 0) continue;
            message.Attempts = seen + 1;
            message.NextAttemptAt = leaseEnd;
            claimed.Add(message);
        }
        await transaction.CommitAsync(ct);
        return claimed;
    }

    private readonly record struct Outcome(string State, DateTimeOffset NextAttemptAt, DateTimeOffset? DeliveredAt, string? Error);

    /// <summary>
    /// Writes the attempts' results in one transaction; a row that a later claim has taken (after this pass's lease
    /// ran out) keeps the later attempt's result.
    /// </summary>
    private static async Task RecordAsync(TeachServeDb db, List<(OutboxMessage Message, Outcome Outcome)> outcomes, CancellationToken ct)
    {
        if (outcomes.Count == 0) return;
        await using var transaction = await db.Database.BeginTransactionAsync(ct);
        foreach (var (message, outcome) in outcomes)
        {
            await db.Outbox
                .Where(m => m.Id == message.Id && m.Attempts == message.Attempts)
                .ExecuteUpdateAsync(u => u
                    .SetProperty(m => m.State, outcome.State)
                    .SetProperty(m => m.NextAttemptAt, outcome.NextAttemptAt)
                    .SetProperty(m => m.DeliveredAt, outcome.DeliveredAt)
                    .SetProperty(m => m.LastError, outcome.Error), ct);
        }
        await transaction.CommitAsync(ct);
    }

    private async Task<Outcome> AttemptAsync(OutboxMessage message, string? storedSecret, CancellationToken ct)
    {
        var settings = options.Value.Webhooks;
        string? secret, error = null;
        try
        {
            secret = secrets.Reveal(storedSecret);
        }
        catch (System.Security.Cryptography.CryptographicException)
        {
            secret = null;
            error = "The webhook secret cannot be decrypted: its data-protection key is not in the key ring.";
        }
        if (error is null)
        {
            error = string.IsNullOrEmpty(secret)
                ? "The project has no webhook secret any more."
                : await PostAsync(message, secret, settings.RequestTimeout, ct);
        }

        var now = time.GetUtcNow();
        if (error is null)
        {
            LogDelivered(logger, message.Id, message.EventType, message.Attempts);
            return new Outcome(OutboxStates.Delivered, message.NextAttemptAt, now, null);
        }
        error = error.Length > 1000 ? error[..1000] : error;
        if (message.Attempts >= settings.MaxAttempts)
        {
            LogGaveUp(logger, message.Id, message.Attempts, error);
            return new Outcome(OutboxStates.GaveUp, message.NextAttemptAt, null, error);
        }
        var next = now + Backoff(message.Attempts, settings);
        LogRetry(logger, message.Id, message.Attempts, next, error);
        return new Outcome(OutboxStates.Pending, next, null, error);
    }

    private async Task<string?> PostAsync(OutboxMessage message, string secret, TimeSpan timeout, CancellationToken ct)
    {
        // The stored body, byte for byte, under the message's id; only the attempt's timestamp and signature are new.
        using var request = new HttpRequestMessage(HttpMethod.Post, message.Url)
        {
            Content = new StringContent(message.PayloadJson, Encoding.UTF8, WebhookEvents.MediaType),
        };
        var id = DeliveryIdOf(message);
        var timestamp = time.GetUtcNow().ToUnixTimeSeconds();
        request.Headers.Add(WebhookSignature.IdHeader, id);
        request.Headers.Add(WebhookSignature.TimestampHeader, timestamp.ToString(System.Globalization.CultureInfo.InvariantCulture));
        request.Headers.Add(WebhookSignature.SignatureHeader,
            WebhookSignature.Sign(WebhookSigningKey.Of(secret), id, timestamp, message.PayloadJson));
        using var attempt = CancellationTokenSource.CreateLinkedTokenSource(ct);
        attempt.CancelAfter(timeout);
        try
        {
            using var response = await httpClients.CreateClient(HttpClientName).SendAsync(request, attempt.Token);
            return response.IsSuccessStatusCode ? null : $"The receiver answered {(int)response.StatusCode}.";
        }
        catch (OperationCanceledException) when (!ct.IsCancellationRequested)
        {
            return $"No answer within {timeout.TotalSeconds} s.";
        }
        catch (HttpRequestException e) when (RefusedAddressException.In(e) is { } refused)
        {
            return $"{refused.Message} Deliveries to loopback and private networks need TeachServe:Webhooks:AllowPrivateNetworks.";
        }
        catch (HttpRequestException e)
        {
            return e.Message;
        }
    }

    /// <summary>
    /// The id receivers see (<c>webhook-id</c>, and the CloudEvent's <c>id</c>); rows written before random ids keep
    /// their row number, so their retries still match.
    /// </summary>
    public static string DeliveryIdOf(OutboxMessage message) =>
        message.DeliveryId ?? message.Id.ToString(System.Globalization.CultureInfo.InvariantCulture);

    /// <summary>initial · 2^(attempt−1), capped.</summary>
    public static TimeSpan Backoff(int attempts, WebhookOptions settings)
    {
        var factor = Math.Pow(2, Math.Min(attempts - 1, 30));
        var delay = settings.InitialBackoff * factor;
        return delay > settings.MaxBackoff ? settings.MaxBackoff : delay;
    }

    private static TimeSpan Clamp(TimeSpan wait, TimeSpan max) => wait < max ? wait : max;

    [LoggerMessage(Level = LogLevel.Information, Message = "Webhook {Id} ({EventType}) delivered after {Attempts} attempt(s)")]
    private static partial void LogDelivered(ILogger logger, long id, string eventType, int attempts);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Webhook {Id} attempt {Attempts} failed, next at {NextAttemptAt}: {Error}")]
    private static partial void LogRetry(ILogger logger, long id, int attempts, DateTimeOffset nextAttemptAt, string error);

    [LoggerMessage(Level = LogLevel.Error, Message = "Webhook {Id} given up after {Attempts} attempts: {Error}")]
    private static partial void LogGaveUp(ILogger logger, long id, int attempts, string error);

    [LoggerMessage(Level = LogLevel.Error, Message = "Webhook {Id}: the attempt's result could not be recorded; the row falls due again after its lease")]
    private static partial void LogRecordFailed(ILogger logger, Exception exception, long id);

    [LoggerMessage(Level = LogLevel.Error, Message = "Outbox pass failed; retrying after the poll interval")]
    private static partial void LogPassFailed(ILogger logger, Exception exception);
}
