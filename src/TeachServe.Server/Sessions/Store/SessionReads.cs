using System.Collections.Concurrent;
using System.Data.Common;
using System.Linq.Expressions;
using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Infrastructure;
using Microsoft.EntityFrameworkCore.Metadata;
using Microsoft.EntityFrameworkCore.Storage;
using TeachServe.Server.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Sessions.Store;

/// <summary>The key hashes of a project, for checking an owner or embed key.</summary>
public sealed record ProjectKeyHashes(byte[] OwnerKeyHash, byte[] EmbedKeyHash);

/// <summary>
/// The reads of the annotator paths (every request, every session start, every session end), for the provider
/// chosen once when the server starts (<see cref="For"/>). On SQLite the reads by key go through
/// <see cref="SqliteRowReader{TEntity}"/> (prepared, pooled); the others are EF compiled queries: the LINQ expression
/// is translated once instead of being parsed, hashed and looked up in the query cache on every call (profiling
/// showed that at ~7% of the server's CPU under load). A compiled query keeps the model of the first context it ran
/// on, so each query is compiled for the provider's own context type.
/// </summary>
public abstract class SessionReads : IDisposable
{
    /// <summary>The reads of the configured provider; the context handed to every read must be of that provider.</summary>
    public static SessionReads For(TeachServeOptions options, IServiceScopeFactory scopes) =>
        options.Database.Provider == DatabaseProviders.Postgres ? new Compiled<PostgresTeachServeDb>() : new OnSqlite(scopes);

    /// <summary>The session row, untracked.</summary>
    public abstract Task<Session?> SessionAsync(TeachServeDb db, string id, CancellationToken ct);

    /// <summary>The owner and embed key hashes of a project; null if there is no such project.</summary>
    public abstract Task<ProjectKeyHashes?> ProjectKeysAsync(TeachServeDb db, string projectId, CancellationToken ct);

    /// <summary>The project row, untracked; null if there is no such project.</summary>
    public abstract Task<Project?> ProjectAsync(TeachServeDb db, string projectId, CancellationToken ct);

    /// <summary>The worker's active session in the project (tracked: the caller may change it), if any.</summary>
    public abstract Task<Session?> ActiveSessionAsync(TeachServeDb db, string projectId, string workerRef, CancellationToken ct);

    /// <summary>The number of the project's newest ready model version; null if none is ready.</summary>
    public abstract Task<int?> NewestReadyVersionAsync(TeachServeDb db, string projectId, CancellationToken ct);

    /// <summary>The project's running experiment, untracked, if any.</summary>
    public abstract Task<Experiment?> RunningExperimentAsync(TeachServeDb db, string projectId, CancellationToken ct);

    public void Dispose()
    {
        Dispose(true);
        GC.SuppressFinalize(this);
    }

    protected virtual void Dispose(bool disposing)
    {
    }

    /// <summary>Every read as an EF compiled query on the context type <typeparamref name="TDb"/>.</summary>
    private class Compiled<TDb> : SessionReads where TDb : TeachServeDb
    {
        private static readonly Func<TDb, string, CancellationToken, Task<Session?>> Session =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Sessions.AsNoTracking().FirstOrDefault(s => s.Id == id));

        private static readonly Func<TDb, string, CancellationToken, Task<ProjectKeyHashes?>> ProjectKeys =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Projects.AsNoTracking().Where(p => p.Id == id)
                    .Select(p => new ProjectKeyHashes(p.OwnerKeyHash, p.EmbedKeyHash)).FirstOrDefault());

        private static readonly Func<TDb, string, CancellationToken, Task<Project?>> Project =
            EF.CompileAsyncQuery((TDb db, string id, CancellationToken ct) =>
                db.Projects.AsNoTracking().FirstOrDefault(p => p.Id == id));

        private static readonly Func<TDb, string, string, CancellationToken, Task<Session?>> ActiveSession =
            EF.CompileAsyncQuery((TDb db, string projectId, string workerRef, CancellationToken ct) =>
                db.Sessions.FirstOrDefault(s => s.ProjectId == projectId && s.WorkerRef == workerRef && s.IsActive));

        private static readonly Func<TDb, string, CancellationToken, Task<int?>> NewestReadyVersion =
            EF.CompileAsyncQuery((TDb db, string projectId, CancellationToken ct) =>
                db.ModelVersions.Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready)
                    .Max(v => (int?)v.Number));

        private static readonly Func<TDb, string, CancellationToken, Task<Experiment?>> RunningExperiment =
            EF.CompileAsyncQuery((TDb db, string projectId, CancellationToken ct) =>
                db.Set<Experiment>().AsNoTracking()
                    .FirstOrDefault(e => e.ProjectId == projectId && e.Status == ExperimentStatuses.Running));

        public override Task<Session?> SessionAsync(TeachServeDb db, string id, CancellationToken ct) => Session(Of(db), id, ct);

        public override Task<ProjectKeyHashes?> ProjectKeysAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            ProjectKeys(Of(db), projectId, ct);

        public override Task<Project?> ProjectAsync(TeachServeDb db, string projectId, CancellationToken ct) => Project(Of(db), projectId, ct);

        public override Task<Session?> ActiveSessionAsync(TeachServeDb db, string projectId, string workerRef, CancellationToken ct) =>
            ActiveSession(Of(db), projectId, workerRef, ct);

        public override Task<int?> NewestReadyVersionAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            NewestReadyVersion(Of(db), projectId, ct);

        public override Task<Experiment?> RunningExperimentAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            RunningExperiment(Of(db), projectId, ct);

        /// <summary>A context of another provider than the one chosen at start is a wiring fault, not a case to serve.</summary>
        private static TDb Of(TeachServeDb db) => db as TDb
            ?? throw new InvalidOperationException($"The reads were set up for {typeof(TDb).Name}, but got a {db.GetType().Name}.");
    }

    /// <summary>SQLite: the reads by key from pooled connections with prepared statements, the rest compiled.</summary>
    private sealed class OnSqlite(IServiceScopeFactory scopes) : Compiled<SqliteTeachServeDb>
    {
        private readonly SqliteRowReader<Session> _sessions = new(scopes);
        private readonly SqliteRowReader<Project> _projects = new(scopes);

        public override Task<Session?> SessionAsync(TeachServeDb db, string id, CancellationToken ct) =>
            Task.FromResult(_sessions.Read(id));

        public override Task<ProjectKeyHashes?> ProjectKeysAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            Task.FromResult(_projects.Read(projectId) is { } p ? new ProjectKeyHashes(p.OwnerKeyHash, p.EmbedKeyHash) : null);

        public override Task<Project?> ProjectAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
            Task.FromResult(_projects.Read(projectId));

        protected override void Dispose(bool disposing)
        {
            if (disposing)
            {
                _sessions.Dispose();
                _projects.Dispose();
            }
            base.Dispose(disposing);
        }
    }
}

/// <summary>
/// A read of one row by its (single, string) primary key on SQLite, without EF's per-query work: a pool of open
/// connections, each with the SELECT prepared once, and a materializer built from the EF model (so the model
/// stays the one description of the columns). <see cref="SessionReads"/> uses it on SQLite for the reads by key of the
/// annotator paths: the session row on every request, the project row at every session start and end. Profiling the load harness showed an EF compiled query
/// at about 90–170 µs of CPU a read, most of it opening and closing the pooled connection and SQLite parsing the
/// same SQL again; here a read is a bind, a B-tree lookup and the column reads. SQLite connections are in-process
/// and cheap to keep open; on PostgreSQL, whose connections are server processes, EF and Npgsql's pool are used.
/// </summary>
public sealed class SqliteRowReader<TEntity>(IServiceScopeFactory scopes) : IDisposable where TEntity : class
{
    /// <summary>At most this many idle connections are kept; more concurrent reads open and then close their own.</summary>
    public const int MaxIdle = 64;

    private readonly ConcurrentBag<Lease> _idle = [];
    private int _idleCount;
    private Shape? _shape;

    public TEntity? Read(string key)
    {
        if (!_idle.TryTake(out var lease)) lease = new Lease(scopes, this);
        else Interlocked.Decrement(ref _idleCount);
        TEntity? row;
        try
        {
            row = lease.Read(key);
        }
        catch
        {
            lease.Dispose();
            throw;
        }
        if (Interlocked.Increment(ref _idleCount) <= MaxIdle) _idle.Add(lease);
        else
        {
            Interlocked.Decrement(ref _idleCount);
            lease.Dispose();
        }
        return row;
    }

    public void Dispose()
    {
        while (_idle.TryTake(out var lease)) lease.Dispose();
    }

    /// <summary>The SELECT and the materializer, built once from the model.</summary>
    private sealed class Shape
    {
        public required string Sql { get; init; }
        public required Func<DbDataReader, TEntity> Materialize { get; init; }

        public static Shape Of(TeachServeDb db)
        {
            var entity = db.Model.FindEntityType(typeof(TEntity))
                ?? throw new InvalidOperationException($"{typeof(TEntity).Name} is not an entity of the model.");
            var table = StoreObjectIdentifier.Table(entity.GetTableName()!, entity.GetSchema());
            var sql = db.GetService<ISqlGenerationHelper>();
            // Shadow properties have no CLR member to fill; the entities read this way have none.
            var properties = entity.GetProperties().Where(p => p.PropertyInfo is not null).ToList();
            var columns = string.Join(", ", properties.Select(p => sql.DelimitIdentifier(p.GetColumnName(table)!)));
            var keyProperty = entity.FindPrimaryKey()?.Properties is [{ ClrType: var keyType } only] && keyType == typeof(string)
                ? only
                : throw new InvalidOperationException($"{typeof(TEntity).Name} needs a single string primary key to be read by key.");
            var key = sql.DelimitIdentifier(keyProperty.GetColumnName(table)!);

            // new TEntity { Id = r.GetFieldValue<string>(0), ..., EndedAt = r.IsDBNull(k) ? null : r.GetFieldValue<DateTimeOffset>(k) }
            var r = Expression.Parameter(typeof(DbDataReader), "r");
            var getFieldValue = typeof(DbDataReader).GetMethod(nameof(DbDataReader.GetFieldValue))!;
            var isDbNull = typeof(DbDataReader).GetMethod(nameof(DbDataReader.IsDBNull))!;
            var bindings = properties.Select((p, i) =>
            {
                var type = p.ClrType;
                // A column with a value converter (e.g. times stored as numbers) is read as the stored type and
                // converted with the model's own conversion expression.
                var converter = p.GetTypeMapping().Converter;
                var stored = converter?.ProviderClrType ?? type;
                stored = Nullable.GetUnderlyingType(stored) ?? stored;
                Expression value = Expression.Call(r, getFieldValue.MakeGenericMethod(stored), Expression.Constant(i));
                if (converter is not null)
                {
                    var from = converter.ConvertFromProviderExpression;
                    var input = from.Parameters[0].Type;
                    value = Expression.Invoke(from, input == stored ? value : Expression.Convert(value, input));
                }
                if (value.Type != type) value = Expression.Convert(value, type);
                if (p.IsNullable)
                    value = Expression.Condition(Expression.Call(r, isDbNull, Expression.Constant(i)), Expression.Default(type), value);
                return (MemberBinding)Expression.Bind(p.PropertyInfo!, value);
            });
            var body = Expression.MemberInit(Expression.New(typeof(TEntity)), bindings);
            return new Shape
            {
                Sql = $"SELECT {columns} FROM {sql.DelimitIdentifier(table.Name, table.Schema)} WHERE {key} = {sql.GenerateParameterName("id")}",
                Materialize = Expression.Lambda<Func<DbDataReader, TEntity>>(body, r).Compile(),
            };
        }
    }

    /// <summary>One open connection with its prepared command; used by one read at a time.</summary>
    private sealed class Lease : IDisposable
    {
        private readonly DedicatedConnection _open;
        private readonly DbCommand _command;
        private readonly DbParameter _id;
        private readonly Shape _shape;

        public Lease(IServiceScopeFactory scopes, SqliteRowReader<TEntity> owner)
        {
            _open = new DedicatedConnection(scopes);
            try
            {
                _shape = owner._shape ??= Shape.Of(_open.Db);
                _command = _open.Connection.CreateCommand();
                _command.CommandText = _shape.Sql;
                _id = _command.CreateParameter();
                _id.ParameterName = "@id";
                _command.Parameters.Add(_id);
                _command.Prepare();
            }
            catch
            {
                _open.Dispose();
                throw;
            }
        }

        public TEntity? Read(string key)
        {
            _id.Value = key;
            using var reader = _command.ExecuteReader();
            return reader.Read() ? _shape.Materialize(reader) : null;
        }

        public void Dispose()
        {
            _command.Dispose();
            _open.Dispose();
        }
    }
}
