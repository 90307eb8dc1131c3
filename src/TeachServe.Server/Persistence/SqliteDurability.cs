using System.Data.Common;
using System.Runtime.CompilerServices;
using Microsoft.Data.Sqlite;
using SQLitePCL;
using Microsoft.EntityFrameworkCore.Diagnostics;

namespace TeachServe.Server.Persistence;

/// <summary>
/// Sets <c>PRAGMA synchronous=FULL</c> on every SQLite connection (the setting is per connection, not stored in
/// the file). In WAL mode FULL syncs the write-ahead log at every commit, so a committed answer survives a process
/// crash and also an operating-system crash or power loss. NORMAL would sync only at checkpoints: still safe
/// against a process crash (the WAL is in the OS cache), but a power loss could take the last commits with it —
/// answers that were already acknowledged. The answer writer commits many answers at once, so the one sync per
/// batch is cheap enough to keep the stronger guarantee.
/// <para>
/// It also sets <c>busy_timeout</c>, so a connection that finds another one writing waits inside SQLite (short
/// sleeps of 1, 2, 5, 10 … ms) instead of returning SQLITE_BUSY at once. Without it the ADO.NET provider retries
/// a busy statement after sleeping 150 ms on the calling thread; under load those sleeps were most of the answer
/// latency (p99 from ~500 ms to ~90 ms in the load harness when this was added).
/// </para>
/// <para>
/// And <c>secure_delete=ON</c>: deleted content is overwritten with zeros, so an erased worker's rows do not stay
/// readable in free pages of the file (see <see cref="Workers.ErasureScrub"/> for the write-ahead log).
/// </para>
/// </summary>
public sealed class SqliteDurability : DbConnectionInterceptor
{
    public const string Pragma = "PRAGMA synchronous=FULL; PRAGMA busy_timeout=30000; PRAGMA secure_delete=ON;";

    /// <summary>
    /// Physical connections already set up. The provider pools them and EF opens one for every query, so the
    /// pragmas run once per physical connection, not once per query.
    /// </summary>
    private static readonly ConditionalWeakTable<sqlite3, object> Applied = new();
    private static readonly object Marker = new();

    public override void ConnectionOpened(DbConnection connection, ConnectionEndEventData eventData)
    {
        if (!NeedsSetup(connection)) return;
        using var command = connection.CreateCommand();
        command.CommandText = Pragma;
        command.ExecuteNonQuery();
    }

    public override async Task ConnectionOpenedAsync(DbConnection connection, ConnectionEndEventData eventData, CancellationToken cancellationToken = default)
    {
        if (!NeedsSetup(connection)) return;
        await using var command = connection.CreateCommand();
        command.CommandText = Pragma;
        await command.ExecuteNonQueryAsync(cancellationToken);
    }

    private static bool NeedsSetup(DbConnection connection) =>
        connection is not SqliteConnection { Handle: { } handle } || Applied.TryAdd(handle, Marker);
}
