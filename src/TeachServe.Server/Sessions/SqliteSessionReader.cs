using System.Collections.Concurrent;
using System.Data.Common;
using System.Linq.Expressions;
using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Infrastructure;
using Microsoft.EntityFrameworkCore.Metadata;
using Microsoft.EntityFrameworkCore.Storage;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions;

/// <summary>
/// The session-row read of every annotator request on SQLite, without EF's per-query work: a pool of open
/// connections, each with the SELECT prepared once, and a materializer built from the EF model (so the model
/// stays the one description of the columns). Profiling the load harness showed the EF compiled query at about
/// 90 µs of CPU a read, most of it opening and closing the pooled connection and SQLite parsing the same SQL again;
/// here a read is a bind, a B-tree lookup and the column reads. SQLite connections are in-process and cheap to
/// keep open; on PostgreSQL, whose connections are server processes, the EF query and Npgsql's pool are used.
/// </summary>
public sealed class SqliteSessionReader(IServiceScopeFactory scopes) : IDisposable
{
    /// <summary>At most this many idle connections are kept; more concurrent reads open and then close their own.</summary>
    public const int MaxIdle = 64;

    private readonly ConcurrentBag<Lease> _idle = [];
    private int _idleCount;
    private Shape? _shape;

    public Session? Read(string sessionId)
    {
        if (!_idle.TryTake(out var lease)) lease = new Lease(scopes, this);
        else Interlocked.Decrement(ref _idleCount);
        Session? row;
        try
        {
            row = lease.Read(sessionId);
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
        public required Func<DbDataReader, Session> Materialize { get; init; }

        public static Shape Of(TeachServeDb db)
        {
            var entity = db.Model.FindEntityType(typeof(Session))!;
            var table = StoreObjectIdentifier.Table(entity.GetTableName()!, entity.GetSchema());
            var sql = db.GetService<ISqlGenerationHelper>();
            var properties = entity.GetProperties().ToList();
            var columns = string.Join(", ", properties.Select(p => sql.DelimitIdentifier(p.GetColumnName(table)!)));
            var key = sql.DelimitIdentifier(entity.FindProperty(nameof(Session.Id))!.GetColumnName(table)!);

            // new Session { Id = r.GetFieldValue<string>(0), ..., EndedAt = r.IsDBNull(k) ? null : r.GetFieldValue<DateTimeOffset>(k) }
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
            var body = Expression.MemberInit(Expression.New(typeof(Session)), bindings);
            return new Shape
            {
                Sql = $"SELECT {columns} FROM {sql.DelimitIdentifier(table.Name, table.Schema)} WHERE {key} = {sql.GenerateParameterName("id")}",
                Materialize = Expression.Lambda<Func<DbDataReader, Session>>(body, r).Compile(),
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

        public Lease(IServiceScopeFactory scopes, SqliteSessionReader owner)
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

        public Session? Read(string sessionId)
        {
            _id.Value = sessionId;
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
