using System.Data.Common;
using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Infrastructure;
using Microsoft.EntityFrameworkCore.Metadata;
using Microsoft.EntityFrameworkCore.Storage;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.LiveQuality;

/// <summary>
/// The live-check writer's row writes, as commands prepared once per transaction on the context's own connection and
/// transaction and run again with new values: an outcome row (its id read back), a monitor row inserted, a monitor row
/// rewritten if its revision is still the one read. Through SaveChanges a group of a few hundred outcomes spent most of
/// its time in change tracking, SQL generation and SQLite parsing each row's statement (measured: 50–120 ms of a
/// 90–180 ms group on the shared 2-core machine). Names and type mappings come from the EF model, so both providers
/// are served by the same code and the model stays the one description of the schema.
/// </summary>
internal sealed class LiveCheckStatements : IDisposable
{
    private readonly DbCommand _insertCheck;
    private readonly List<(IProperty Column, DbParameter Parameter)> _checkParameters;
    private readonly DbCommand _insertMonitor;
    private readonly List<(IProperty Column, DbParameter Parameter)> _insertMonitorParameters;
    private readonly DbCommand _updateMonitor;
    private readonly List<(IProperty Column, DbParameter Parameter)> _updateMonitorParameters;
    private readonly DbParameter _revisionRead;

    public LiveCheckStatements(TeachServeDb db)
    {
        var connection = db.Database.GetDbConnection();
        var tx = db.Database.CurrentTransaction?.GetDbTransaction() ?? throw new InvalidOperationException("The writes need the writer's transaction.");
        var sql = db.GetService<ISqlGenerationHelper>();

        var checks = db.Model.FindEntityType(typeof(LiveCheckRecord))!;
        var checkTable = StoreObjectIdentifier.Table(checks.GetTableName()!, checks.GetSchema());
        var id = checks.FindProperty(nameof(LiveCheckRecord.Id))!;
        var checkColumns = checks.GetProperties().Where(p => p != id).ToList();
        (_insertCheck, _checkParameters) = Command(connection, tx, sql, checkColumns,
            $"INSERT INTO {sql.DelimitIdentifier(checkTable.Name, checkTable.Schema)} ({Names(sql, checkColumns, checkTable)}) " +
            $"VALUES ({Parameters(sql, checkColumns.Count)}) RETURNING {sql.DelimitIdentifier(id.GetColumnName(checkTable)!)}");

        var monitors = db.Model.FindEntityType(typeof(LiveMonitorRecord))!;
        var monitorTable = StoreObjectIdentifier.Table(monitors.GetTableName()!, monitors.GetSchema());
        var all = monitors.GetProperties().ToList();
        var table = sql.DelimitIdentifier(monitorTable.Name, monitorTable.Schema);
        (_insertMonitor, _insertMonitorParameters) = Command(connection, tx, sql, all,
            $"INSERT INTO {table} ({Names(sql, all, monitorTable)}) VALUES ({Parameters(sql, all.Count)})");
        // SET every column that is not a key, WHERE the key and the revision read: the same check EF's concurrency token makes.
        var keys = all.Where(p => p.IsPrimaryKey()).ToList();
        var values = all.Where(p => !p.IsPrimaryKey()).ToList();
        var ordered = values.Concat(keys).ToList();
        string Column(IProperty p) => sql.DelimitIdentifier(p.GetColumnName(monitorTable)!);
        var set = string.Join(", ", values.Select((p, i) => $"{Column(p)} = {sql.GenerateParameterName($"p{i}")}"));
        var where = string.Join(" AND ", keys.Select((p, i) => $"{Column(p)} = {sql.GenerateParameterName($"p{values.Count + i}")}"));
        var revision = monitors.FindProperty(nameof(LiveMonitorRecord.Revision))!;
        (_updateMonitor, _updateMonitorParameters) = Command(connection, tx, sql, ordered,
            $"UPDATE {table} SET {set} WHERE {where} AND {Column(revision)} = {sql.GenerateParameterName("read")}");
        _revisionRead = ((RelationalTypeMapping)revision.GetTypeMapping()).CreateParameter(_updateMonitor, "read", null, nullable: false);
        _updateMonitor.Parameters.Add(_revisionRead);

        _insertCheck.Prepare();
        _insertMonitor.Prepare();
        _updateMonitor.Prepare();
    }

    /// <summary>Inserts an outcome row and sets its id (arrival order) from the database.</summary>
    public async Task InsertAsync(LiveCheckRecord row, CancellationToken ct)
    {
        Bind(_checkParameters, row);
        row.Id = Convert.ToInt64(await Refused(() => _insertCheck.ExecuteScalarAsync(ct)), System.Globalization.CultureInfo.InvariantCulture);
    }

    public async Task InsertAsync(LiveMonitorRecord record, CancellationToken ct)
    {
        Bind(_insertMonitorParameters, record);
        await Refused(() => _insertMonitor.ExecuteNonQueryAsync(ct));
    }

    /// <summary>Rewrites the monitor row if its revision is still <paramref name="revisionRead"/>; otherwise another writer moved it.</summary>
    public async Task UpdateAsync(LiveMonitorRecord record, int revisionRead, CancellationToken ct)
    {
        Bind(_updateMonitorParameters, record);
        _revisionRead.Value = revisionRead;
        if (await Refused(() => _updateMonitor.ExecuteNonQueryAsync(ct)) != 1)
            throw new DbUpdateConcurrencyException($"The live monitor of {record.WorkerRef} changed (or went) since it was read.");
    }

    /// <summary>
    /// A refused write (another node stored the id, or the monitor, first) surfaces as SaveChanges would surface it,
    /// a <see cref="DbUpdateException"/>, on which the writer stores the batch again on its own.
    /// </summary>
    private static async Task<T> Refused<T>(Func<Task<T>> write)
    {
        try
        {
            return await write();
        }
        catch (DbException e)
        {
            throw new DbUpdateException("The database refused a live-check write; nothing of the transaction was stored.", e);
        }
    }

    public void Dispose()
    {
        _insertCheck.Dispose();
        _insertMonitor.Dispose();
        _updateMonitor.Dispose();
    }

    private static string Names(ISqlGenerationHelper sql, IEnumerable<IProperty> columns, StoreObjectIdentifier table) =>
        string.Join(", ", columns.Select(p => sql.DelimitIdentifier(p.GetColumnName(table)!)));

    private static string Parameters(ISqlGenerationHelper sql, int count) =>
        string.Join(", ", Enumerable.Range(0, count).Select(i => sql.GenerateParameterName($"p{i}")));

    private static (DbCommand, List<(IProperty, DbParameter)>) Command(
        DbConnection connection, DbTransaction tx, ISqlGenerationHelper sql, List<IProperty> columns, string text)
    {
        var command = connection.CreateCommand();
        command.CommandText = text;
        command.Transaction = tx;
        var parameters = columns.Select((p, i) =>
        {
            var parameter = ((RelationalTypeMapping)p.GetTypeMapping()).CreateParameter(command, $"p{i}", null, p.IsNullable);
            command.Parameters.Add(parameter);
            return (p, parameter);
        }).ToList();
        return (command, parameters);
    }

    /// <summary>Each column's value read off the entity and converted as EF would (SQLite keeps times as 64-bit numbers).</summary>
    private static void Bind(List<(IProperty Column, DbParameter Parameter)> parameters, object entity)
    {
        foreach (var (column, parameter) in parameters)
        {
            var value = column.PropertyInfo!.GetValue(entity);
            if (value is not null && column.GetTypeMapping().Converter is { } converter) value = converter.ConvertToProvider(value);
            parameter.Value = value ?? DBNull.Value;
        }
    }
}
