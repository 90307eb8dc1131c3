using System.Collections.Concurrent;
using System.Data.Common;
using System.Linq.Expressions;
using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Infrastructure;
using Microsoft.EntityFrameworkCore.Metadata;
using Microsoft.EntityFrameworkCore.Storage;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions.Store;

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
