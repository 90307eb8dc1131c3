using System.Data.Common;
using System.Linq.Expressions;
using TeachServe.Server.Infrastructure;
using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Infrastructure;
using Microsoft.EntityFrameworkCore.Metadata;
using Microsoft.EntityFrameworkCore.Storage;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions.Store;

/// <summary>One unit of work for the single writer: rows to append, committed together or not at all.</summary>
public abstract class PendingWrite
{
    public required IReadOnlyList<object> Rows { get; init; }

    internal TaskCompletionSource<bool> Done { get; } = new(TaskCreationOptions.RunContinuationsAsynchronously);
}

/// <summary>
/// The rows of one answer, computed by <see cref="SessionOperations.AnswerAsync"/> and waiting for the single writer: the new
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
    /// <summary>
    /// Exposure counts this answer adds to, in the same transaction (<see cref="Exposure.TestExposure"/>): the test
    /// item on the session's first answer to it, and the tested-session row on the session's first test answer.
    /// </summary>
    public IReadOnlyList<(string ProjectId, string ItemId)> Exposures { get; init; } = [];
}

/// <summary>New rows only (a new session with its launch code and start event); fails on a unique-key clash.</summary>
public sealed class PendingRows : PendingWrite;

/// <summary>
/// The single writer of the annotator hot path, with group commit: every answer and every new session (its row,
/// launch code and start event) is written here. Requests put a <see cref="PendingWrite"/> on a
/// channel and wait; one loop, on a thread of its own, takes every write that is waiting (up to
/// <see cref="MaxBatch"/>), applies them in order in one transaction, commits, and only then completes each
/// request: true when its rows are durable, false when its step had already moved on (an earlier write of the
/// same session in this very batch, or another node). One commit (one fsync) then carries many answers; while
/// it runs, the next batch gathers. Having one writer also means the hot path never waits for SQLite's write lock.
/// <para>
/// The session rows are not read first: each answer's UPDATE carries "and the step is still the one the request
/// read" (<see cref="Session.Step"/> is the optimistic-concurrency token), and an answer that updates nothing
/// appends nothing. Every write still is its own unit: when a batch fails (one bad write such as a second active
/// session for a worker, or the database going away), its writes are retried one transaction each, so one cannot
/// fail the others. The SQL comes from <see cref="PreparedWrites"/>: prepared once, provider-neutral.
/// </para>
/// <para>
/// It is registered before the start-up tasks, so the demo project's session can be written while the host is still
/// starting; the thread touches the database only when writes arrive. The queue, thread and stop are
/// <see cref="SingleWriter{TWork}"/>'s, shared with the live-check writer.
/// </para>
/// </summary>
public sealed partial class GroupCommitWriter(IServiceScopeFactory scopes, ILogger<GroupCommitWriter> logger)
    : SingleWriter<PendingWrite>("TeachServe writer", MaxBatch, 8 * MaxBatch)
{
    public const int MaxBatch = 256;
    private PreparedWrites? _statements;

    /// <summary>Queues the write and completes after its commit: true if written, false if its step was taken.</summary>
    public async Task<bool> CommitAsync(PendingWrite write, CancellationToken ct)
    {
        await EnqueueAsync(write, ct);
        // Once queued the write is not abandoned with the request: the caller learns how it ended.
        return await write.Done.Task;
    }

    protected override void WriteGroup(List<PendingWrite> group)
    {
        var started = System.Diagnostics.Stopwatch.GetTimestamp();
        WriteBatch(group);
        if (logger.IsEnabled(LogLevel.Debug))
        {
            var elapsed = System.Diagnostics.Stopwatch.GetElapsedTime(started);
            LogBatch(logger, group.Count, elapsed.TotalMilliseconds);
        }
    }

    protected override void Abandon(PendingWrite work, Exception reason) => work.Done.TrySetException(reason);

    protected override void OnStopped() => Reset();

    private void WriteBatch(List<PendingWrite> batch)
    {
        bool[] written;
        try
        {
            written = WriteTogether(batch);
        }
        catch (Exception e)
        {
            // One bad write (a second active session for a worker), or the database failing: drop the connection
            // (it may be broken) and write every write again in a transaction of its own, so one cannot fail the others.
            LogBatchFailed(logger, batch.Count, e);
            Reset();
            foreach (var one in batch)
            {
                try
                {
                    one.Done.TrySetResult(WriteOne(one));
                }
                catch (Exception single)
                {
                    Reset();
                    one.Done.TrySetException(single is DbException ? new DbUpdateException("The write failed; nothing of it was stored.", single) : single);
                }
            }
            return;
        }
        for (var i = 0; i < batch.Count; i++) batch[i].Done.TrySetResult(written[i]);
    }

    /// <summary>
    /// One transaction, one commit for the whole batch. An answer whose session row is no longer at its step
    /// (an earlier write of the same session in this very batch, or another node) updates nothing, and then its
    /// rows are not appended: the batch resolves as if the writes had run one after another.
    /// </summary>
    private bool[] WriteTogether(List<PendingWrite> batch)
    {
        var sql = _statements ??= new PreparedWrites(scopes);
        var written = new bool[batch.Count];
        using var tx = sql.Begin();
        for (var i = 0; i < batch.Count; i++) written[i] = Apply(sql, batch[i], tx);
        tx.Commit();
        return written;
    }

    /// <summary>One write in its own transaction; false when the session's step has moved on (or the row is gone).</summary>
    private bool WriteOne(PendingWrite write)
    {
        var sql = _statements ??= new PreparedWrites(scopes);
        using var tx = sql.Begin();
        var written = Apply(sql, write, tx);
        tx.Commit();
        return written;
    }

    private static bool Apply(PreparedWrites sql, PendingWrite write, DbTransaction tx)
    {
        if (write is PendingAnswer answer && !sql.Update(answer, tx)) return false;
        foreach (var row in write.Rows) sql.Insert(row, tx);
        if (write is PendingAnswer counted)
        {
            foreach (var (projectId, itemId) in counted.Exposures) sql.CountExposure(projectId, itemId, tx);
        }
        return true;
    }

    private void Reset()
    {
        _statements?.Dispose();
        _statements = null;
    }

    /// <summary>Timing log for profiling the writer: <c>Logging__LogLevel__TeachServe.Server.Sessions.Store.GroupCommitWriter=Debug</c>.</summary>
    [LoggerMessage(Level = LogLevel.Debug, Message = "Committed a batch of {Count} writes in {Milliseconds:0.0} ms")]
    private static partial void LogBatch(ILogger logger, int count, double milliseconds);

    [LoggerMessage(Level = LogLevel.Warning, Message = "A batch of {Count} writes failed; writing them one by one")]
    private static partial void LogBatchFailed(ILogger logger, int count, Exception exception);
}

/// <summary>
/// The group-commit writer's SQL (<see cref="GroupCommitWriter"/>): plain ADO.NET commands on one long-lived connection, each prepared once and run
/// again with new parameter values. Built from the EF Core model (table and column names, and each column's
/// type mapping, which makes the parameters exactly as EF would), so the model stays the one description of
/// the schema and both providers are served by the same code. Profiling showed why: through SaveChanges an answer
/// cost about 0.3 ms of CPU in change tracking, SQL generation and SQLite parsing a new batch text each time;
/// prepared statements leave the binding and the B-tree work.
/// </summary>
public sealed class PreparedWrites : IDisposable
{
    private readonly DedicatedConnection _open;
    private readonly TeachServeDb _db;
    private readonly DbConnection _connection;
    private readonly ISqlGenerationHelper _sql;
    private readonly Dictionary<Type, Statement> _inserts = [];
    private readonly Statement _update;
    private readonly Statement _exposure;

    /// <summary>The session-row columns an answer rewrites; the WHERE clause adds the key and the step read.</summary>
    public static readonly string[] SummaryColumns =
    [
        nameof(Session.Step), nameof(Session.Phase), nameof(Session.IsActive), nameof(Session.PredictedError),
        nameof(Session.TaughtCount), nameof(Session.TestAnswered), nameof(Session.LastSeenAt), nameof(Session.EndedAt),
        nameof(Session.EvidenceJson),
    ];

    public PreparedWrites(IServiceScopeFactory scopes)
    {
        _open = new DedicatedConnection(scopes);
        _db = _open.Db;
        _connection = _open.Connection;
        _sql = _db.GetService<ISqlGenerationHelper>();
        _update = UpdateSummary();
        _exposure = CountExposureStatement();
    }

    public DbTransaction Begin() => _connection.BeginTransaction();

    /// <summary>Appends one row of any mapped entity type.</summary>
    public void Insert(object row, DbTransaction tx)
    {
        var type = row.GetType();
        if (!_inserts.TryGetValue(type, out var insert)) _inserts[type] = insert = InsertInto(type);
        insert.Run(row, tx);
    }

    /// <summary>Rewrites the session's summary if the row is still at the answer's step; false if it is not (or is gone).</summary>
    public bool Update(PendingAnswer answer, DbTransaction tx) => _update.Run(answer, tx) == 1;

    /// <summary>Adds one session to an item's exposure count (creating the row at 1).</summary>
    public void CountExposure(string projectId, string itemId, DbTransaction tx) =>
        _exposure.Run(new Exposure.TestExposure { ProjectId = projectId, ItemId = itemId, Sessions = 1 }, tx);

    public void Dispose() => _open.Dispose();

    private Statement InsertInto(Type clrType)
    {
        var entity = _db.Model.FindEntityType(clrType) ?? throw new InvalidOperationException($"{clrType.Name} is not mapped.");
        var table = StoreObjectIdentifier.Table(entity.GetTableName()!, entity.GetSchema());
        // Keys the database generates (identity / autoincrement) are left to it; every other column is written.
        var columns = entity.GetProperties()
            .Where(p => !(p.IsPrimaryKey() && p.ValueGenerated == ValueGenerated.OnAdd))
            .ToList();
        var names = columns.Select(p => _sql.DelimitIdentifier(p.GetColumnName(table)!)).ToList();
        var text = $"INSERT INTO {_sql.DelimitIdentifier(table.Name, table.Schema)} ({string.Join(", ", names)}) " +
                   $"VALUES ({string.Join(", ", columns.Select((_, i) => _sql.GenerateParameterName($"p{i}")))})";
        return new Statement(_connection, text, columns.Select((p, i) => Bind.Of(p, $"p{i}", clrType)).ToList());
    }

    private Statement UpdateSummary()
    {
        var entity = _db.Model.FindEntityType(typeof(Session))!;
        var table = StoreObjectIdentifier.Table(entity.GetTableName()!, entity.GetSchema());
        string Column(string property) => _sql.DelimitIdentifier(entity.FindProperty(property)!.GetColumnName(table)!);
        var set = SummaryColumns.Select((c, i) => $"{Column(c)} = {_sql.GenerateParameterName($"p{i}")}");
        var text = $"UPDATE {_sql.DelimitIdentifier(table.Name, table.Schema)} SET {string.Join(", ", set)} " +
                   $"WHERE {Column(nameof(Session.Id))} = {_sql.GenerateParameterName("id")} " +
                   $"AND {Column(nameof(Session.Step))} = {_sql.GenerateParameterName("from")}";
        var binds = SummaryColumns
            .Select((c, i) => Bind.Of(entity.FindProperty(c)!, $"p{i}", typeof(PendingAnswer), c switch
            {
                nameof(Session.Step) => nameof(PendingAnswer.ToStep),
                nameof(Session.LastSeenAt) => nameof(PendingAnswer.Now),
                _ => c,
            }))
            .Append(Bind.Of(entity.FindProperty(nameof(Session.Id))!, "id", typeof(PendingAnswer), nameof(PendingAnswer.SessionId)))
            .Append(Bind.Of(entity.FindProperty(nameof(Session.Step))!, "from", typeof(PendingAnswer), nameof(PendingAnswer.FromStep)))
            .ToList();
        return new Statement(_connection, text, binds);
    }

    /// <summary>
    /// An upsert: <c>INSERT … ON CONFLICT (key) DO UPDATE</c> is the same statement on SQLite (3.24 and later) and
    /// PostgreSQL (9.5 and later), and atomic on both, so nodes counting the same item at once lose no count.
    /// </summary>
    private Statement CountExposureStatement()
    {
        var entity = _db.Model.FindEntityType(typeof(Exposure.TestExposure))!;
        var table = StoreObjectIdentifier.Table(entity.GetTableName()!, entity.GetSchema());
        string Column(string property) => _sql.DelimitIdentifier(entity.FindProperty(property)!.GetColumnName(table)!);
        var name = _sql.DelimitIdentifier(table.Name, table.Schema);
        var sessions = Column(nameof(Exposure.TestExposure.Sessions));
        var text = $"INSERT INTO {name} ({Column(nameof(Exposure.TestExposure.ProjectId))}, {Column(nameof(Exposure.TestExposure.ItemId))}, {sessions}) " +
                   $"VALUES ({_sql.GenerateParameterName("p0")}, {_sql.GenerateParameterName("p1")}, {_sql.GenerateParameterName("p2")}) " +
                   $"ON CONFLICT ({Column(nameof(Exposure.TestExposure.ProjectId))}, {Column(nameof(Exposure.TestExposure.ItemId))}) " +
                   $"DO UPDATE SET {sessions} = {name}.{sessions} + 1";
        var type = typeof(Exposure.TestExposure);
        return new Statement(_connection, text,
        [
            Bind.Of(entity.FindProperty(nameof(Exposure.TestExposure.ProjectId))!, "p0", type),
            Bind.Of(entity.FindProperty(nameof(Exposure.TestExposure.ItemId))!, "p1", type),
            Bind.Of(entity.FindProperty(nameof(Exposure.TestExposure.Sessions))!, "p2", type),
        ]);
    }

    /// <summary>A parameter, the column's type mapping, and how to read its value off the object written.</summary>
    private sealed record Bind(string Name, IProperty Column, RelationalTypeMapping Mapping, Func<object, object?> Read)
    {
        public static Bind Of(IProperty column, string name, Type source, string? member = null)
        {
            var o = Expression.Parameter(typeof(object));
            var read = Expression.Lambda<Func<object, object?>>(
                Expression.Convert(Expression.PropertyOrField(Expression.Convert(o, source), member ?? column.Name), typeof(object)), o).Compile();
            return new Bind(name, column, (RelationalTypeMapping)column.GetTypeMapping(), read);
        }

        public object Value(object row)
        {
            var value = Read(row);
            if (value is not null && Mapping.Converter is { } converter) value = converter.ConvertToProvider(value);
            return value ?? DBNull.Value;
        }
    }

    private sealed class Statement
    {
        private readonly DbCommand _command;
        private readonly List<(Bind Bind, DbParameter Parameter)> _parameters;
        private bool _prepared;

        public Statement(DbConnection connection, string text, List<Bind> binds)
        {
            _command = connection.CreateCommand();
            _command.CommandText = text;
            _parameters = binds.Select(b =>
            {
                var parameter = b.Mapping.CreateParameter(_command, b.Name, null, b.Column.IsNullable);
                _command.Parameters.Add(parameter);
                return (b, parameter);
            }).ToList();
        }

        public int Run(object row, DbTransaction tx)
        {
            foreach (var (bind, parameter) in _parameters) parameter.Value = bind.Value(row);
            _command.Transaction = tx;
            if (!_prepared)
            {
                _command.Prepare();
                _prepared = true;
            }
            return _command.ExecuteNonQuery();
        }
    }
}
