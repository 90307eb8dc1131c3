using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
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
