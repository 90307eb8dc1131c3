using System.Net.Sockets;
using Microsoft.Data.Sqlite;
using Microsoft.EntityFrameworkCore;
using Npgsql;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Tests;

/// <summary>Which failures become 503 (the database cannot answer) and which stay bugs or rejected writes.</summary>
public sealed class DatabaseUnavailableTests
{
    [Fact]
    public void Connection_failures_and_transient_server_states_are_unavailability()
    {
        Assert.True(DatabaseUnavailable.Is(new NpgsqlException("Failed to connect", new SocketException((int)SocketError.ConnectionRefused))));
        Assert.True(DatabaseUnavailable.Is(new DbUpdateException("save", new NpgsqlException("Exception while reading from stream"))));
        Assert.True(DatabaseUnavailable.Is(new PostgresException("terminating connection due to administrator command", "FATAL", "FATAL", "57P01")));
        Assert.True(DatabaseUnavailable.Is(new PostgresException("sorry, too many clients already", "FATAL", "FATAL", "53300")));
        Assert.True(DatabaseUnavailable.Is(new SqliteException("database is locked", 5)));
    }

    [Fact]
    public void Constraint_violations_and_bugs_are_not()
    {
        Assert.False(DatabaseUnavailable.Is(new DbUpdateException("save",
            new PostgresException("duplicate key value violates unique constraint", "ERROR", "ERROR", "23505"))));
        Assert.False(DatabaseUnavailable.Is(new PostgresException("syntax error", "ERROR", "ERROR", "42601")));
        Assert.False(DatabaseUnavailable.Is(new DbUpdateException("save", new SqliteException("UNIQUE constraint failed", 19))));
        Assert.False(DatabaseUnavailable.Is(new InvalidOperationException("a bug")));
    }
}
