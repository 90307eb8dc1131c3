using System.Data.Common;
using System.Runtime.CompilerServices;
using Microsoft.Data.Sqlite;
using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Diagnostics;
using Microsoft.Extensions.Options;
using SQLitePCL;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Persistence;

public static class PersistenceExtensions
{
    public const string DatabaseFileName = "teachserve.db";

    /// <summary>
    /// Registers <see cref="TeachServeDb"/> as the context of the configured provider. The choice is made
    /// when the first context is resolved, so configuration added by hosts and tests is honoured. Contexts are
    /// pooled: every request and every answer batch needs one, and a reset is cheaper than a new context.
    /// </summary>
    public static IServiceCollection AddPersistence(this IServiceCollection services)
    {
        services.AddDbContextPool<SqliteTeachServeDb>((sp, o) =>
            o.UseSqlite(SqliteConnectionString(sp.GetRequiredService<IOptions<TeachServeOptions>>().Value))
                .AddInterceptors(new SqliteDurability()));
        services.AddDbContextPool<PostgresTeachServeDb>((sp, o) =>
            o.UseNpgsql(sp.GetRequiredService<IOptions<TeachServeOptions>>().Value.Database.ConnectionString));
        services.AddScoped<TeachServeDb>(sp =>
            sp.GetRequiredService<IOptions<TeachServeOptions>>().Value.Database.Provider == DatabaseProviders.Postgres
                ? sp.GetRequiredService<PostgresTeachServeDb>()
                : sp.GetRequiredService<SqliteTeachServeDb>());
        return services;
    }

    public static string SqliteConnectionString(TeachServeOptions options) =>
        options.Database.ConnectionString is { Length: > 0 } configured
            ? configured
            : $"Data Source={Path.Combine(Path.GetFullPath(options.DataDirectory), DatabaseFileName)};Default Timeout=30";

    /// <summary>
    /// Applies the provider's own migrations (each context only sees the ones in its folder); SQLite additionally
    /// switches to write-ahead logging so readers never block the writer. Several nodes may start at once against
    /// one PostgreSQL: EF Core takes a database lock around migrating, so only one applies them. SQLite's folder and
    /// files are created readable by the server's user only (<see cref="DataFileModes"/>).
    /// </summary>
    public static async Task MigrateAsync(TeachServeDb db, TeachServeOptions options, CancellationToken ct)
    {
        if (db.Database.IsSqlite())
        {
            var inDataDirectory = options.Database.ConnectionString is not { Length: > 0 };
            DataFileModes.Prepare(SqliteConnectionString(options), inDataDirectory ? options.DataDirectory : null);
        }
        await db.Database.MigrateAsync(ct);
        if (db.Database.IsSqlite())
            await db.Database.ExecuteSqlRawAsync("PRAGMA journal_mode=WAL;", ct);
    }
}

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
    /// <summary>
    /// The pragmas of a new physical connection. The busy timeout is the connection string's <c>Default Timeout</c>
    /// (30 s in the server's own connection string), so a configured shorter wait is honoured here too.
    /// </summary>
    public static string Pragma(DbConnection connection) =>
        $"PRAGMA synchronous=FULL; PRAGMA busy_timeout={BusyMilliseconds(connection)}; PRAGMA secure_delete=ON;";

    private static int BusyMilliseconds(DbConnection connection) =>
        connection is SqliteConnection { DefaultTimeout: > 0 and var seconds } ? Math.Min(seconds, int.MaxValue / 1000) * 1000 : 30_000;

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
        command.CommandText = Pragma(connection);
        command.ExecuteNonQuery();
    }

    public override async Task ConnectionOpenedAsync(DbConnection connection, ConnectionEndEventData eventData, CancellationToken cancellationToken = default)
    {
        if (!NeedsSetup(connection)) return;
        await using var command = connection.CreateCommand();
        command.CommandText = Pragma(connection);
        await command.ExecuteNonQueryAsync(cancellationToken);
    }

    private static bool NeedsSetup(DbConnection connection) =>
        connection is not SqliteConnection { Handle: { } handle } || Applied.TryAdd(handle, Marker);
}
