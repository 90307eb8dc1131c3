using System.Security.Cryptography;
using System.Text;
using Npgsql;

namespace TeachServe.Server.Tests;

/// <summary>
/// Which database the server tests run on. <c>./test.sh</c> runs this project twice: once as is (SQLite), and
/// once with <c>TEACHSERVE_TEST_PROVIDER=postgres</c> and <c>TEACHSERVE_TEST_POSTGRES</c> naming a throwaway
/// cluster, where each test app gets a database of its own (named after its data folder, so a restart in the
/// same folder finds its data again).
/// </summary>
public static class TestDatabase
{
    public const string ProviderVariable = "TEACHSERVE_TEST_PROVIDER";
    public const string ServerVariable = "TEACHSERVE_TEST_POSTGRES";

    public static bool IsPostgres =>
        string.Equals(Environment.GetEnvironmentVariable(ProviderVariable), "postgres", StringComparison.OrdinalIgnoreCase);

    /// <summary>The throwaway server's connection string; tests that need PostgreSQL fail here, loudly, without it.</summary>
    public static string Server => Environment.GetEnvironmentVariable(ServerVariable) is { Length: > 0 } s
        ? s
        : throw new InvalidOperationException(
            $"This test needs PostgreSQL: set {ServerVariable} to a connection string of a server you may create " +
            "databases on (./test.sh starts a throwaway cluster and sets it).");

    public static string NameFor(string dataDirectory) =>
        "ts_" + Convert.ToHexStringLower(SHA256.HashData(Encoding.UTF8.GetBytes(Path.GetFullPath(dataDirectory))))[..24];

    /// <summary>Creates the database unless it exists, and returns its connection string.</summary>
    public static string Create(string name)
    {
        using (var admin = new NpgsqlConnection(Server))
        {
            admin.Open();
            using var exists = new NpgsqlCommand("SELECT 1 FROM pg_database WHERE datname = @n", admin);
            exists.Parameters.AddWithValue("n", name);
            if (exists.ExecuteScalar() is null)
            {
                using var create = new NpgsqlCommand($"CREATE DATABASE \"{name}\"", admin);
                create.ExecuteNonQuery();
            }
        }
        return ConnectionString(name);
    }

    public static string ConnectionString(string name) =>
        new NpgsqlConnectionStringBuilder(Server) { Database = name }.ConnectionString;

    public static void Drop(string name)
    {
        using (var pooled = new NpgsqlConnection(ConnectionString(name))) NpgsqlConnection.ClearPool(pooled);
        using var admin = new NpgsqlConnection(Server);
        admin.Open();
        using var drop = new NpgsqlCommand($"DROP DATABASE IF EXISTS \"{name}\" WITH (FORCE)", admin);
        drop.ExecuteNonQuery();
    }
}
