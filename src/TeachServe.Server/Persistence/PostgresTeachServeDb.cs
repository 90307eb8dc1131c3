using Microsoft.EntityFrameworkCore;

namespace TeachServe.Server.Persistence;

/// <summary>
/// The PostgreSQL flavour of <see cref="TeachServeDb"/>; its migrations live in <c>Persistence/Migrations/Postgres</c>.
/// Times are <c>timestamp with time zone</c>, which Npgsql writes only for UTC offsets: the server takes every
/// time from <see cref="TimeProvider.GetUtcNow"/>, so that always holds.
/// </summary>
public sealed class PostgresTeachServeDb(DbContextOptions<PostgresTeachServeDb> options) : TeachServeDb(options);
