using System.Net.Sockets;
using Microsoft.Data.Sqlite;
using Npgsql;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// Tells a database that cannot be reached (or is too busy to answer) from a bug or a rejected write, so the
/// former becomes 503 with Retry-After instead of 500. Nothing is cached: once the database answers again,
/// the next request simply succeeds.
/// </summary>
public static class DatabaseUnavailable
{
    /// <summary>How long clients are asked to wait before retrying.</summary>
    public static readonly TimeSpan RetryAfter = TimeSpan.FromSeconds(5);

    public static bool Is(Exception exception)
    {
        for (var e = exception; e is not null; e = e.InnerException)
        {
            switch (e)
            {
                // Server errors (constraint violations, bad SQL) are ours to fix, except the transient classes:
                // connection failures, shutdowns, too many connections, serialization failures.
                case PostgresException pg:
                    return pg.IsTransient;
                case NpgsqlException:
                    return true;
                case SocketException:
                    return true;
                // SQLITE_BUSY, SQLITE_LOCKED, SQLITE_CANTOPEN, SQLITE_IOERR
                case SqliteException { SqliteErrorCode: 5 or 6 or 14 or 10 }:
                    return true;
            }
        }
        return false;
    }
}
