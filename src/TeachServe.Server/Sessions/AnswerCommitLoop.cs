using System.Threading.Channels;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions;

/// <summary>One unit of work for the single writer: rows to append, committed together or not at all.</summary>
public abstract class PendingWrite
{
    public required IReadOnlyList<object> Rows { get; init; }

    internal TaskCompletionSource<bool> Done { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);
}

/// <summary>
/// The rows of one answer, computed by <see cref="AnswerWriter"/> and waiting for the single writer: the new
/// summary of the session row (written only if the row is still at <see cref="FromStep"/>) and the rows to
/// append (answer event, and on the gate's decision the end event, release and webhook outbox row).
/// </summary>
public sealed class PendingAnswer : PendingWrite
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
}

/// <summary>New rows only (a new session with its launch code and start event); fails on a unique-key clash.</summary>
public sealed class PendingRows : PendingWrite;

/// <summary>
/// The single writer of the annotator hot path, with group commit. Requests put a <see cref="PendingWrite"/> on a
/// channel and wait; one loop, on a thread of its own, takes every write that is waiting (up to
/// <see cref="MaxBatch"/>), applies them in order in one transaction, commits, and only then completes each
/// request: true when its rows are durable, false when its step had already moved on (an earlier write of the
/// same session in this very batch, or another node). One commit (one fsync) then carries many answers; while
/// it runs, the next batch gathers. Having one writer also means the hot path never waits for SQLite's write lock.
/// <para>
/// The session rows are not read first: each answer's UPDATE carries "and the step is still the one the request
/// read" (<see cref="Session.Step"/> is a concurrency token), so if another node moved a row, the transaction
/// fails as a whole. Every write still is its own unit: when a batch fails (that conflict, or one bad write such
/// as a second active session for a worker), its writes are retried one transaction each, so one cannot fail the
/// others. Provider-neutral: only EF Core operations.
/// </para>
/// </summary>
public sealed partial class AnswerCommitLoop(IServiceScopeFactory scopes, ILogger<AnswerCommitLoop> logger) : IHostedService, IDisposable
{
    public const int MaxBatch = 256;
    private readonly Channel<PendingWrite> _queue = Channel.CreateBounded<PendingWrite>(
        new BoundedChannelOptions(8 * MaxBatch) { SingleReader = true, FullMode = BoundedChannelFullMode.Wait });
    private readonly CancellationTokenSource _stopping = new();
    private Thread? _thread;
    private int _disposed;

    /// <summary>Queues the write and completes after its commit: true if written, false if its step was taken.</summary>
    public async Task<bool> CommitAsync(PendingWrite write, CancellationToken ct)
    {
        await _queue.Writer.WriteAsync(write, ct);
        // Once queued the write is not abandoned with the request: the caller learns how it ended.
        return await write.Done.Task;
    }

    /// <summary>
    /// Starts the writer thread. Registered before the start-up tasks, so the demo project's session can be
    /// written while the host is still starting; the thread touches the database only when writes arrive.
    /// </summary>
    public Task StartAsync(CancellationToken cancellationToken)
    {
        _thread = new Thread(Run) { IsBackground = true, Name = "TeachServe writer" };
        _thread.Start();
        return Task.CompletedTask;
    }

    public Task StopAsync(CancellationToken cancellationToken)
    {
        _queue.Writer.TryComplete();
        // The writes already queued are committed before the thread ends (bounded by the host's stop timeout).
        return Task.Run(() => _thread?.Join(), cancellationToken);
    }

    /// <summary>Stops a writer still waiting for work (it is registered twice, as itself and as a hosted service).</summary>
    public void Dispose()
    {
        if (Interlocked.Exchange(ref _disposed, 1) != 0) return;
        _stopping.Cancel();
        _stopping.Dispose();
    }

    private void Run()
    {
        var batch = new List<PendingWrite>(MaxBatch);
        try
        {
            // A thread of its own: a batch never waits in the thread pool's queue behind request work.
            while (_queue.Reader.WaitToReadAsync(_stopping.Token).AsTask().GetAwaiter().GetResult())
            {
                batch.Clear();
                while (batch.Count < MaxBatch && _queue.Reader.TryRead(out var next)) batch.Add(next);
                var started = System.Diagnostics.Stopwatch.GetTimestamp();
                WriteBatch(batch);
                if (logger.IsEnabled(LogLevel.Debug))
                {
                    var elapsed = System.Diagnostics.Stopwatch.GetElapsedTime(started);
                    LogBatch(logger, batch.Count, elapsed.TotalMilliseconds);
                }
            }
        }
        catch (OperationCanceledException)
        {
        }
        finally
        {
            _queue.Writer.TryComplete();
            while (_queue.Reader.TryRead(out var left))
                left.Done.TrySetException(new OperationCanceledException("The server is stopping."));
        }
    }

    private void WriteBatch(List<PendingWrite> batch)
    {
        bool[] written;
        try
        {
            written = WriteTogether(batch);
        }
        catch (Exception e)
        {
            // A conflict with another node's write, or one bad write: every write again, in a transaction of its own.
            if (e is not DbUpdateConcurrencyException) LogBatchFailed(logger, batch.Count, e);
            foreach (var one in batch)
            {
                try
                {
                    one.Done.TrySetResult(WriteOne(one));
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
    /// One SaveChanges (one transaction, one commit) for the whole batch. Writes of one session in one batch are
    /// applied in order against the row as the earlier ones left it, as if they had run one after another.
    /// </summary>
    private bool[] WriteTogether(IReadOnlyList<PendingWrite> batch)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var rows = new Dictionary<string, Session>(StringComparer.Ordinal);
        var written = new bool[batch.Count];
        for (var i = 0; i < batch.Count; i++)
        {
            if (batch[i] is PendingAnswer a)
            {
                if (rows.TryGetValue(a.SessionId, out var row))
                {
                    if (row.Step != a.FromStep) continue;
                }
                else
                {
                    row = Attach(db, a.SessionId, a.FromStep);
                    rows[a.SessionId] = row;
                }
                Apply(row, a);
            }
            foreach (var r in batch[i].Rows) db.Add(r);
            written[i] = true;
        }
        db.SaveChanges();
        return written;
    }

    /// <summary>
    /// The session row as the writes expect to find it: only the key and the step (the concurrency token) are
    /// known, and the summary columns are marked changed, so the UPDATE writes exactly those and checks the step.
    /// </summary>
    private static Session Attach(TeachServeDb db, string sessionId, int step)
    {
        var row = new Session
        {
            Id = sessionId, Step = step, ProjectId = "", WorkerRef = "", Phase = "", Policy = "", TokenHash = [], RefKey = [],
        };
        var entry = db.Sessions.Attach(row);
        foreach (var name in SummaryColumns) entry.Property(name).IsModified = true;
        return row;
    }

    private static readonly string[] SummaryColumns =
    [
        nameof(Session.Step), nameof(Session.Phase), nameof(Session.IsActive), nameof(Session.PredictedError),
        nameof(Session.TaughtCount), nameof(Session.TestAnswered), nameof(Session.LastSeenAt), nameof(Session.EndedAt),
        nameof(Session.EvidenceJson),
    ];

    private static void Apply(Session row, PendingAnswer a)
    {
        row.Step = a.ToStep;
        row.Phase = a.Phase;
        row.IsActive = a.IsActive;
        row.PredictedError = a.PredictedError;
        row.TaughtCount = a.TaughtCount;
        row.TestAnswered = a.TestAnswered;
        row.LastSeenAt = a.Now;
        row.EndedAt = a.EndedAt;
        row.EvidenceJson = a.EvidenceJson;
    }

    /// <summary>One write in its own transaction; false when the session's step has moved on (or the row is gone).</summary>
    private bool WriteOne(PendingWrite write)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        if (write is PendingAnswer a) Apply(Attach(db, a.SessionId, a.FromStep), a);
        foreach (var r in write.Rows) db.Add(r);
        try
        {
            db.SaveChanges();
            return true;
        }
        catch (DbUpdateConcurrencyException) when (write is PendingAnswer)
        {
            return false;
        }
    }

    /// <summary>Timing log for profiling the writer: <c>Logging__LogLevel__TeachServe.Server.Sessions.AnswerCommitLoop=Debug</c>.</summary>
    [LoggerMessage(Level = LogLevel.Debug, Message = "Committed a batch of {Count} writes in {Milliseconds:0.0} ms")]
    private static partial void LogBatch(ILogger logger, int count, double milliseconds);

    [LoggerMessage(Level = LogLevel.Warning, Message = "A batch of {Count} writes failed; writing them one by one")]
    private static partial void LogBatchFailed(ILogger logger, int count, Exception exception);
}
