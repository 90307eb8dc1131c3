using System.Threading.Channels;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions;

/// <summary>
/// The rows of one answer, computed by <see cref="AnswerWriter"/> and waiting for the single writer: the new
/// summary of the session row (written only if the row is still at <see cref="FromStep"/>) and the rows to
/// append (answer event, and on the gate's decision the end event, release and webhook outbox row).
/// </summary>
public sealed class PendingAnswer
{
    public required string SessionId { get; init; }
    public required int FromStep { get; init; }
    public required int ToStep { get; init; }
    public required string Phase { get; init; }
    public required bool IsActive { get; init; }
    public required double PredictedError { get; init; }
    public required int TaughtCount { get; init; }
    public required int TestAnswered { get; init; }
    public required DateTimeOffset Now { get; init; }
    public required DateTimeOffset? EndedAt { get; init; }
    public required string? EvidenceJson { get; init; }
    public required IReadOnlyList<object> Rows { get; init; }

    internal TaskCompletionSource<bool> Done { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);
}

/// <summary>
/// The single writer of answers, with group commit. Requests put their <see cref="PendingAnswer"/> on a channel
/// and wait; one loop takes every write that is waiting (up to <see cref="MaxBatch"/>), applies them in order in
/// one transaction, commits, and only then completes each request: true when its rows are durable, false when
/// its step had already moved on (another node, or an earlier write of the same session in this very batch:
/// the transaction sees its own updates, so the step check resolves the batch as if the writes ran one after
/// another). One commit (one fsync) then carries many answers; while it runs, the next batch gathers.
/// Every write still is its own unit: if a batch fails as a whole (a conflict with another node, or one bad
/// write), its writes are retried one transaction each, so one cannot fail the others. Provider-neutral: only
/// EF Core operations.
/// </summary>
public sealed partial class AnswerCommitLoop(IServiceScopeFactory scopes, ILogger<AnswerCommitLoop> logger) : BackgroundService
{
    public const int MaxBatch = 256;
    private readonly Channel<PendingAnswer> _queue = Channel.CreateBounded<PendingAnswer>(
        new BoundedChannelOptions(8 * MaxBatch) { SingleReader = true, FullMode = BoundedChannelFullMode.Wait });

    /// <summary>Queues the write and completes after its commit: true if written, false if its step was taken.</summary>
    public async Task<bool> CommitAsync(PendingAnswer answer, CancellationToken ct)
    {
        await _queue.Writer.WriteAsync(answer, ct);
        // Once queued the write is not abandoned with the request: the caller learns how it ended.
        return await answer.Done.Task;
    }

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        var batch = new List<PendingAnswer>(MaxBatch);
        try
        {
            while (await _queue.Reader.WaitToReadAsync(stoppingToken))
            {
                batch.Clear();
                while (batch.Count < MaxBatch && _queue.Reader.TryRead(out var next)) batch.Add(next);
                var started = System.Diagnostics.Stopwatch.GetTimestamp();
                await WriteBatchAsync(batch);
                if (logger.IsEnabled(LogLevel.Debug))
                {
                    var elapsed = System.Diagnostics.Stopwatch.GetElapsedTime(started);
                    LogBatch(logger, batch.Count, elapsed.TotalMilliseconds);
                }
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
        finally
        {
            _queue.Writer.TryComplete();
            while (_queue.Reader.TryRead(out var left))
                left.Done.TrySetException(new OperationCanceledException("The server is stopping."));
        }
    }

    private async Task WriteBatchAsync(List<PendingAnswer> batch)
    {
        bool[] written;
        try
        {
            written = await WriteTogetherAsync(batch);
        }
        catch (Exception e)
        {
            // A conflict with another node's write, or one bad write: every write again, in a transaction of its own.
            if (e is not DbUpdateConcurrencyException) LogBatchFailed(logger, batch.Count, e);
            foreach (var one in batch)
            {
                try
                {
                    one.Done.TrySetResult(await WriteOneAsync(one));
                }
                catch (Exception single)
                {
                    one.Done.TrySetException(single);
                }
            }
            return;
        }
        for (var i = 0; i < batch.Count; i++) batch[i].Done.TrySetResult(written[i]);
    }

    /// <summary>
    /// One read of the batch's session rows, then one SaveChanges (one transaction, one commit) for all of it.
    /// <see cref="Session.Step"/> is a concurrency token, so each UPDATE still carries "and the step is still the
    /// one we read"; if another node moved a row since the read, the whole transaction fails and the batch is
    /// retried write by write. Writes of one session in one batch are applied in order against the row as the
    /// earlier ones left it, as if they had run one after another.
    /// </summary>
    private async Task<bool[]> WriteTogetherAsync(IReadOnlyList<PendingAnswer> batch)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var ids = batch.Select(a => a.SessionId).Distinct(StringComparer.Ordinal).ToList();
        var rows = await db.Sessions.Where(s => ids.Contains(s.Id)).ToDictionaryAsync(s => s.Id, StringComparer.Ordinal);
        var written = new bool[batch.Count];
        for (var i = 0; i < batch.Count; i++)
        {
            var a = batch[i];
            if (!rows.TryGetValue(a.SessionId, out var row) || row.Step != a.FromStep) continue;
            row.Step = a.ToStep;
            row.Phase = a.Phase;
            row.IsActive = a.IsActive;
            row.PredictedError = a.PredictedError;
            row.TaughtCount = a.TaughtCount;
            row.TestAnswered = a.TestAnswered;
            row.LastSeenAt = a.Now;
            row.EndedAt = a.EndedAt;
            row.EvidenceJson = a.EvidenceJson;
            foreach (var r in a.Rows) db.Add(r);
            written[i] = true;
        }
        await db.SaveChangesAsync();
        return written;
    }

    /// <summary>One write in its own transaction; false when the session's step has moved on.</summary>
    private async Task<bool> WriteOneAsync(PendingAnswer a)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        await using var tx = await db.Database.BeginTransactionAsync();
        var updated = await db.Sessions
            .Where(s => s.Id == a.SessionId && s.Step == a.FromStep)
            .ExecuteUpdateAsync(u => u
                .SetProperty(s => s.Step, a.ToStep)
                .SetProperty(s => s.Phase, a.Phase)
                .SetProperty(s => s.IsActive, a.IsActive)
                .SetProperty(s => s.PredictedError, a.PredictedError)
                .SetProperty(s => s.TaughtCount, a.TaughtCount)
                .SetProperty(s => s.TestAnswered, a.TestAnswered)
                .SetProperty(s => s.LastSeenAt, a.Now)
                .SetProperty(s => s.EndedAt, a.EndedAt)
                .SetProperty(s => s.EvidenceJson, a.EvidenceJson));
        if (updated == 0) return false;
        foreach (var r in a.Rows) db.Add(r);
        await db.SaveChangesAsync();
        await tx.CommitAsync();
        return true;
    }

    /// <summary>Timing log for profiling the writer: <c>Logging__LogLevel__TeachServe.Server.Sessions.AnswerCommitLoop=Debug</c>.</summary>
    [LoggerMessage(Level = LogLevel.Debug, Message = "Committed a batch of {Count} answers in {Milliseconds:0.0} ms")]
    private static partial void LogBatch(ILogger logger, int count, double milliseconds);

    [LoggerMessage(Level = LogLevel.Warning, Message = "A batch of {Count} answers failed; writing them one by one")]
    private static partial void LogBatchFailed(ILogger logger, int count, Exception exception);
}
