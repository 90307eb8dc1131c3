using System.Text;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// Delivers outbox rows at least once: a row leaves the pending state only after a 2xx answer (or after the
/// last attempt). Failed attempts are retried with exponential backoff; rows survive restarts because they
/// live in the database. Delivery ids let receivers drop duplicates.
/// </summary>
/// <remarks>
/// Several nodes run a dispatcher each against one database. Before posting, a node claims each row of its
/// batch with a conditional UPDATE (the attempt counter it read, still pending, still due) that counts the
/// attempt and moves the row's next attempt a lease ahead; of two nodes that read the same due row, only one
/// claims it. The claims of a batch are one transaction, and so are its results (on SQLite each transaction is a
/// write and a sync outside the answer writer). A result is written only while the claim is still the row's
/// latest attempt. A node that dies mid-delivery leaves its rows pending: they fall due again when the lease
/// ends, so nothing is lost.
/// </remarks>
public sealed partial class OutboxDispatcher(
    IServiceScopeFactory scopes,
    IHttpClientFactory httpClients,
    TimeProvider time,
    IOptions<TeachServeOptions> options,
    OutboxSignal signal,
    ILogger<OutboxDispatcher> logger) : BackgroundService
{
    public const string HttpClientName = "webhooks";
    private const int BatchSize = 20;
    private TaskCompletionSource _idle = new(TaskCreationOptions.RunContinuationsAsynchronously);

    /// <summary>Completes when the dispatcher has nothing due and its timer is armed (for tests that then move the clock).</summary>
    public Task Idle => Volatile.Read(ref _idle).Task;

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        var settings = options.Value.Webhooks;
        while (!stoppingToken.IsCancellationRequested)
        {
            TimeSpan wait;
            try
            {
                var nextDue = await DeliverDueAsync(stoppingToken);
                wait = nextDue is { } due ? Clamp(due - time.GetUtcNow(), settings.PollInterval) : settings.PollInterval;
            }
            catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
            {
                return;
            }
            catch (Exception e)
            {
                LogPassFailed(logger, e);
                wait = settings.PollInterval;
            }
            if (wait <= TimeSpan.Zero) continue;
            try
            {
                await signal.WaitAsync(wait, time, () => Volatile.Read(ref _idle).TrySetResult(), stoppingToken);
            }
            catch (OperationCanceledException)
            {
                return;
            }
            Volatile.Write(ref _idle, new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously));
        }
    }

    /// <summary>Attempts every due row once (those this node claims); returns when the next pending row falls due, if any.</summary>
    public async Task<DateTimeOffset?> DeliverDueAsync(CancellationToken ct)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        while (true)
        {
            var now = time.GetUtcNow();
            var due = await db.Outbox.AsNoTracking()
                .Where(m => m.State == OutboxStates.Pending && m.NextAttemptAt <= now)
                .OrderBy(m => m.NextAttemptAt).ThenBy(m => m.Id).Take(BatchSize).ToListAsync(ct);
            if (due.Count == 0) break;
            var projectIds = due.Select(m => m.ProjectId).Distinct().ToList();
            var secrets = await db.Projects.Where(p => projectIds.Contains(p.Id))
                .ToDictionaryAsync(p => p.Id, p => p.WebhookSecret, ct);
            var claimed = await ClaimAsync(db, due, ct);
            var outcomes = new List<(OutboxMessage Message, Outcome Outcome)>(claimed.Count);
            foreach (var message in claimed)
                outcomes.Add((message, await AttemptAsync(message, secrets.GetValueOrDefault(message.ProjectId), ct)));
            await RecordAsync(db, outcomes, ct);
        }
        return await db.Outbox.Where(m => m.State == OutboxStates.Pending)
            .MinAsync(m => (DateTimeOffset?)m.NextAttemptAt, ct);
    }

    /// <summary>
    /// How long claimed rows stay out of other passes: longer than a pass can take over its batch (its attempts
    /// run one after another, each bounded by the request timeout).
    /// </summary>
    public static TimeSpan ClaimLease(WebhookOptions settings) => (settings.RequestTimeout * BatchSize) + TimeSpan.FromMinutes(1);

    /// <summary>
    /// In one transaction, for each row no other pass has claimed since it was read: count the attempt and move
    /// the row a lease ahead. Returns the rows this pass holds, each carrying its claimed attempt number.
    /// </summary>
    private async Task<List<OutboxMessage>> ClaimAsync(TeachServeDb db, List<OutboxMessage> due, CancellationToken ct)
    {
        var now = time.GetUtcNow();
        var leaseEnd = now + ClaimLease(options.Value.Webhooks);
        var claimed = new List<OutboxMessage>(due.Count);
        await using var transaction = await db.Database.BeginTransactionAsync(ct);
        // In id order, so that two nodes claiming overlapping batches lock the rows in the same order.
        foreach (var message in due.OrderBy(m => m.Id))
        {
            var seen = message.Attempts;
            var rows = await db.Outbox
                .Where(m => m.Id == message.Id && m.State == OutboxStates.Pending && m.Attempts == seen && m.NextAttemptAt <= now)
                .ExecuteUpdateAsync(u => u.SetProperty(m => m.Attempts, seen + 1).SetProperty(m => m.NextAttemptAt, leaseEnd), ct);
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

    private async Task<Outcome> AttemptAsync(OutboxMessage message, string? secret, CancellationToken ct)
    {
        var settings = options.Value.Webhooks;
        var error = string.IsNullOrEmpty(secret)
            ? "The project has no webhook secret any more."
            : await PostAsync(message, secret, settings.RequestTimeout, ct);

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
        using var request = new HttpRequestMessage(HttpMethod.Post, message.Url)
        {
            Content = new StringContent(message.PayloadJson, Encoding.UTF8, "application/json"),
        };
        request.Headers.Add(WebhookSignature.Header,
            WebhookSignature.Create(secret, time.GetUtcNow().ToUnixTimeSeconds(), message.PayloadJson));
        request.Headers.Add(WebhookSignature.DeliveryHeader, message.Id.ToString(System.Globalization.CultureInfo.InvariantCulture));
        request.Headers.Add(WebhookSignature.EventHeader, message.EventType);
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
        catch (HttpRequestException e)
        {
            return e.Message;
        }
    }

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

    [LoggerMessage(Level = LogLevel.Error, Message = "Outbox pass failed; retrying after the poll interval")]
    private static partial void LogPassFailed(ILogger logger, Exception exception);
}
