using System.Security.Cryptography;
using System.Text;
using System.Text.Json.Nodes;
using Microsoft.Data.Sqlite;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Npgsql;
using TeachServe.Server.Persistence;
using TeachServe.Server.Workers;

namespace TeachServe.Server.Tests;

/// <summary>Erasure leaves no copy of the worker's identifier in the database files, and the audit names them by a keyed hash.</summary>
public sealed class ErasureTests
{
    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    [Fact]
    public async Task After_erasure_the_database_files_no_longer_hold_the_worker_ref()
    {
        const string workerRef = "erase-me-q7Zx93kLw";
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var gone = await app.StartSessionAsync(keys, workerRef);
        await TestApp.RunAsync(gone, Honest);
        await app.StartSessionAsync(keys, "keep-me");
        var owner = app.Client(keys.OwnerKey);

        if (TestDatabase.IsPostgres)
        {
            await Api.JsonAsync(await owner.DeleteAsync($"/api/v1/projects/{keys.ProjectId}/workers/{workerRef}"), 200);
            // What PostgreSQL allows (SECURITY.md): the tables that held the worker were vacuumed after the erasure.
            await using var connection = new NpgsqlConnection(app.PostgresConnectionString);
            await connection.OpenAsync();
            await using var command = connection.CreateCommand();
            command.CommandText = "SELECT vacuum_count FROM pg_stat_user_tables WHERE relname = 'Events'";
            Assert.True(Convert.ToInt64(await command.ExecuteScalarAsync(), System.Globalization.CultureInfo.InvariantCulture) > 0);
            return;
        }

        var needle = Encoding.UTF8.GetBytes(workerRef);
        // The scan can fail: before the erasure the ref is in the files (table, index or log).
        Assert.True(Occurrences(app, needle) > 0);

        var erased = await Api.JsonAsync(await owner.DeleteAsync($"/api/v1/projects/{keys.ProjectId}/workers/{workerRef}"), 200);
        Assert.Equal(1, erased["sessions"]!.GetValue<int>());

        Assert.Equal(0, Occurrences(app, needle));
        Assert.Equal(0, new FileInfo(Path.Combine(app.DataDirectory, "teachserve.db-wal")).Length);
        // The rest of the database is intact and still readable.
        Assert.True(Occurrences(app, Encoding.UTF8.GetBytes("keep-me")) > 0);
        await using var db = new SqliteConnection($"Data Source={Path.Combine(app.DataDirectory, "teachserve.db")};Mode=ReadOnly;Pooling=False");
        await db.OpenAsync();
        await using var check = db.CreateCommand();
        check.CommandText = "PRAGMA integrity_check";
        Assert.Equal("ok", (string?)await check.ExecuteScalarAsync());
    }

    /// <summary>Occurrences of the bytes in the database file and its write-ahead log, read raw while the server runs.</summary>
    private static int Occurrences(TestApp app, byte[] needle)
    {
        var count = 0;
        foreach (var name in new[] { "teachserve.db", "teachserve.db-wal" })
        {
            var path = Path.Combine(app.DataDirectory, name);
            if (!File.Exists(path)) continue;
            using var stream = new FileStream(path, FileMode.Open, FileAccess.Read, FileShare.ReadWrite | FileShare.Delete);
            using var copy = new MemoryStream();
            stream.CopyTo(copy);
            var bytes = copy.GetBuffer().AsSpan(0, (int)copy.Length);
            while (bytes.IndexOf(needle) is var at && at >= 0)
            {
                count++;
                bytes = bytes[(at + needle.Length)..];
            }
        }
        return count;
    }

    [Fact]
    public async Task The_audit_subject_is_a_keyed_hash_stable_on_one_server_and_different_on_another()
    {
        var dir = TestApp.NewDataDirectory();
        var time = new Microsoft.Extensions.Time.Testing.FakeTimeProvider(new DateTimeOffset(2026, 1, 5, 9, 0, 0, TimeSpan.Zero));
        string projectId, first, afterRestart;
        using (var app = new TestApp(dataDirectory: dir, time: time))
        {
            var keys = await app.ReadyProjectAsync();
            projectId = keys.ProjectId;
            var owner = app.Client(keys.OwnerKey);
            await app.StartSessionAsync(keys, "alice@example.org");
            first = (await Api.JsonAsync(await owner.DeleteAsync($"/api/v1/projects/{projectId}/workers/alice@example.org"), 200))["subjectHash"]!.GetValue<string>();
            var again = (await Api.JsonAsync(await owner.DeleteAsync($"/api/v1/projects/{projectId}/workers/alice@example.org"), 200))["subjectHash"]!.GetValue<string>();
            Assert.Equal(first, again);
            // Not the reversible unkeyed hash of project and ref.
            var unkeyed = Convert.ToHexStringLower(SHA256.HashData(Encoding.UTF8.GetBytes($"{projectId}\nalice@example.org")));
            Assert.NotEqual(unkeyed, first);
            Assert.Matches("^[0-9a-f]{64}$", first);
        }
        using (var restarted = new TestApp(dataDirectory: dir, time: time))
        {
            restarted.Client();
            afterRestart = restarted.Service<AuditSubjects>().Of(projectId, "alice@example.org");
        }
        Assert.Equal(first, afterRestart);

        // Another server (its own generated key) names the same project and worker differently.
        using (var other = new TestApp())
        {
            other.Client();
            Assert.NotEqual(first, other.Service<AuditSubjects>().Of(projectId, "alice@example.org"));
        }
        SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    [Fact]
    public async Task A_configured_audit_key_gives_the_same_subjects_on_every_node_and_another_key_different_ones()
    {
        var shared = new Dictionary<string, string?> { ["TeachServe:AuditKey"] = "audit-key-shared-by-nodes-0123" };
        using var a = new TestApp(new Dictionary<string, string?>(shared));
        using var b = new TestApp(new Dictionary<string, string?>(shared));
        using var c = new TestApp(new Dictionary<string, string?> { ["TeachServe:AuditKey"] = "audit-key-of-another-server-99" });
        a.Client(); b.Client(); c.Client();
        var subject = a.Service<AuditSubjects>().Of("prj_1", "w-1");
        Assert.Equal(subject, b.Service<AuditSubjects>().Of("prj_1", "w-1"));
        Assert.NotEqual(subject, c.Service<AuditSubjects>().Of("prj_1", "w-1"));
        Assert.NotEqual(subject, a.Service<AuditSubjects>().Of("prj_2", "w-1"));
        var expected = Convert.ToHexStringLower(HMACSHA256.HashData(Encoding.UTF8.GetBytes("audit-key-shared-by-nodes-0123"), Encoding.UTF8.GetBytes("prj_1\nw-1")));
        Assert.Equal(expected, subject);
    }
}
