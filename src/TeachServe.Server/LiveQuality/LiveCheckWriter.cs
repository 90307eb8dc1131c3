using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.LiveQuality;

/// <summary>One validated batch of live-check outcomes waiting for the writer, and how it ended.</summary>
public sealed class PendingLiveChecks
{
    public required string ProjectId { get; init; }
    public required IReadOnlyList<LiveQualityOperations.ValidLine> Lines { get; init; }
    internal TaskCompletionSource<Outcome<LiveChecksStored>> Done { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);
}

/// <summary>
/// The single writer of live-check outcomes on this node, with group commit. Batches were stored each in a transaction
/// of their own, and with 64 senders on SQLite most of a request's time went to waiting for the write lock (SQLite's busy
/// handler sleeps between tries, so the lock was idle while the waiters slept) and to one sync per batch. Here requests
/// validate concurrently, then put their batch on a channel and wait; one loop on a thread of its own takes every batch
/// that is waiting and stores them in one transaction (<see cref="LiveQualityOperations.StoreTogetherAsync"/>), in order,
/// each with its own 409 or result, and completes each request only after the commit. When a transaction fails (another
/// node stored an id or moved a monitor meanwhile, or the database failed), each batch of it is stored again in a
/// transaction of its own, so one cannot fail the others and each stays all or nothing.
/// </summary>
public sealed partial class LiveCheckWriter(IServiceScopeFactory scopes, ILogger<LiveCheckWriter> logger)
    : SingleWriter<PendingLiveChecks>("TeachServe live-check writer", MaxBatches, 4 * MaxBatches)
{
    /// <summary>Batches per transaction, and outcomes: a few large batches fill a transaction as many small ones do.</summary>
    public const int MaxBatches = 256;
    public const int MaxOutcomes = 5_000;
    /// <summary>Tries of one batch alone after its group failed (a concurrent node's id or monitor change is read again).</summary>
    private const int Attempts = 3;

    /// <summary>Queues the batch and completes after its commit (or its 409).</summary>
    internal async Task<Outcome<LiveChecksStored>> StoreAsync(PendingLiveChecks batch, CancellationToken ct)
    {
        await EnqueueAsync(batch, ct);
        // Once queued the batch is not abandoned with the request: the caller learns how it ended.
        return await batch.Done.Task;
    }

    protected override bool Fits(List<PendingLiveChecks> group, PendingLiveChecks candidate) => group.Sum(b => b.Lines.Count) < MaxOutcomes;

    protected override void Abandon(PendingLiveChecks work, Exception reason) => work.Done.TrySetException(reason);

    protected override void WriteGroup(List<PendingLiveChecks> group)
    {
        var started = System.Diagnostics.Stopwatch.GetTimestamp();
        WriteTogether(group);
        if (logger.IsEnabled(LogLevel.Debug))
        {
            var elapsed = System.Diagnostics.Stopwatch.GetElapsedTime(started);
            var outcomes = group.Sum(b => b.Lines.Count);
            LogGroup(logger, group.Count, outcomes, elapsed.TotalMilliseconds);
        }
    }

    private void WriteTogether(List<PendingLiveChecks> group)
    {
        IReadOnlyList<Outcome<LiveChecksStored>> results;
        try
        {
            results = StoreTogether(group);
        }
        catch (Exception e)
        {
            if (group.Count > 1) LogGroupFailed(logger, group.Count, e);
            foreach (var one in group) WriteAlone(one);
            return;
        }
        for (var i = 0; i < group.Count; i++) group[i].Done.TrySetResult(results[i]);
    }

    /// <summary>
    /// Stores one batch in a transaction of its own, up to <see cref="Attempts"/> times. When the database stays busy,
    /// locked or unreachable (or a concurrent writer keeps refusing the commit), the batch ends in 503 with Retry-After:
    /// its transaction was rolled back, so the client may send it again with the same outcome ids.
    /// </summary>
    private void WriteAlone(PendingLiveChecks one)
    {
        for (var attempt = 1; ; attempt++)
        {
            try
            {
                one.Done.TrySetResult(StoreTogether([one])[0]);
                return;
            }
            catch (Exception e) when (e is DbUpdateException || DatabaseUnavailable.Is(e))
            {
                if (attempt < Attempts) continue;
                LogGaveUp(logger, one.Lines.Count, Attempts, e.GetBaseException().Message);
                one.Done.TrySetResult(Unavailable());
                return;
            }
            catch (Exception e)
            {
                one.Done.TrySetException(e);
                return;
            }
        }
    }

    /// <summary>The answer to a batch the database would not take: nothing of it was stored (the endpoint adds Retry-After).</summary>
    internal static Microsoft.AspNetCore.Http.HttpResults.ProblemHttpResult Unavailable() =>
        Problems.Of(StatusCodes.Status503ServiceUnavailable, Problems.Titles.DatabaseUnavailable,
            "The database did not take this batch in time (busy, locked or unreachable); nothing of it was stored. " +
            "Send it again after Retry-After with the same outcome ids.");

    /// <summary>A fresh scope (and context) per transaction: nothing tracked survives a failed one.</summary>
    private IReadOnlyList<Outcome<LiveChecksStored>> StoreTogether(IReadOnlyList<PendingLiveChecks> group)
    {
        using var scope = scopes.CreateScope();
        var operations = scope.ServiceProvider.GetRequiredService<LiveQualityOperations>();
        return operations.StoreTogetherAsync(group, Stopping.Token).GetAwaiter().GetResult();
    }

    /// <summary>Timing log for profiling: <c>Logging__LogLevel__TeachServe.Server.LiveQuality.LiveCheckWriter=Debug</c>.</summary>
    [LoggerMessage(Level = LogLevel.Debug, Message = "Stored a group of {Count} batches ({Outcomes} outcomes) in {Milliseconds:0.0} ms")]
    private static partial void LogGroup(ILogger logger, int count, int outcomes, double milliseconds);

    [LoggerMessage(Level = LogLevel.Warning, Message = "A batch of {Outcomes} live-check outcomes failed {Attempts} times and was answered 503: {Reason}")]
    private static partial void LogGaveUp(ILogger logger, int outcomes, int attempts, string reason);

    [LoggerMessage(Level = LogLevel.Warning, Message = "A group of {Count} live-check batches failed; storing them one by one")]
    private static partial void LogGroupFailed(ILogger logger, int count, Exception exception);
}
