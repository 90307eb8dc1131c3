using Microsoft.Data.Sqlite;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Workers;

/// <summary>
/// After an erasure has committed, removes what the database engine keeps of deleted rows outside the tables.
/// </summary>
/// <remarks>
/// SQLite: every connection runs with <c>PRAGMA secure_delete=ON</c> (<see cref="Persistence.SqliteDurability"/>),
/// so deleted cells and freed pages are overwritten with zeros instead of lingering in free space; in WAL mode
/// the old page images still sit in the write-ahead log, so a <c>wal_checkpoint(TRUNCATE)</c> copies the zeroed
/// pages into the database and empties the log (sqlite.org/pragma.html#pragma_secure_delete and
/// #pragma_wal_checkpoint). The checkpoint waits (busy timeout) for readers of older snapshots; if it still
/// cannot finish, the log is truncated at a later checkpoint and a warning says so.
/// PostgreSQL: a plain <c>VACUUM</c> of the tables that held the worker removes the dead row versions from the
/// tables' pages so they are no longer readable through the database; it does not overwrite the bytes, and the
/// write-ahead log, archives and backups keep them until they are recycled (SECURITY.md says what an operator does).
/// </remarks>
public static partial class ErasureScrub
{
    public static async Task RunAsync(TeachServeDb db, ILogger logger, CancellationToken ct)
    {
        if (db.Database.IsSqlite())
        {
            var connection = (SqliteConnection)db.Database.GetDbConnection();
            await db.Database.OpenConnectionAsync(ct);
            try
            {
                await using var command = connection.CreateCommand();
                command.CommandText = "PRAGMA wal_checkpoint(TRUNCATE);";
                await using var reader = await command.ExecuteReaderAsync(ct);
                // One row: busy (1 when the checkpoint could not complete), frames in the log, frames checkpointed.
                if (await reader.ReadAsync(ct) && reader.GetInt64(0) != 0)
                    LogCheckpointIncomplete(logger, reader.GetInt64(1), reader.GetInt64(2));
            }
            finally
            {
                await db.Database.CloseConnectionAsync();
            }
        }
        else if (db.Database.IsNpgsql())
        {
            // VACUUM cannot run in a transaction; EF runs a raw statement outside one unless one is open.
            await db.Database.ExecuteSqlRawAsync("VACUUM \"Sessions\", \"Events\", \"Releases\", \"Outbox\", \"LaunchCodes\", \"LiveChecks\", \"LiveMonitors\", \"RefresherStarts\";", ct);
        }
    }

    [LoggerMessage(Level = LogLevel.Warning, Message = "Erasure: the WAL checkpoint could not complete ({Frames} frames, {Checkpointed} copied); erased bytes stay in the log until the next full checkpoint")]
    private static partial void LogCheckpointIncomplete(ILogger logger, long frames, long checkpointed);
}
