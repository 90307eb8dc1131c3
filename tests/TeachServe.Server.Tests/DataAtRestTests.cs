using System.Text.Json.Nodes;
using Microsoft.Data.Sqlite;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Persistence;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Tests;

/// <summary>Database files readable by the server's user only; webhook secrets encrypted with the data-protection key ring.</summary>
public sealed class DataAtRestTests
{
    private const string Secret = HookReceiver.Secret;
    /// <summary>A secret of the kind servers accepted before the <c>whsec_</c> form: any string of 16 to 200 characters.</summary>
    private const string OlderSecret = "whsec-at-rest-0123456789";
    private static readonly TimeSpan Tolerance = TimeSpan.FromMinutes(5);

    /// <summary>This test is about SQLite's files, so it runs on SQLite whichever provider the suite runs on.</summary>
    private static Dictionary<string, string?> OnSqlite() => new()
    {
        ["TeachServe:Database:Provider"] = "sqlite",
        ["TeachServe:Database:ConnectionString"] = "",
    };

    private static string Honest(JsonNode item, string phase) => TestApp.TruthOf(item);

    [Fact]
    [System.Runtime.Versioning.UnsupportedOSPlatform("windows")]
    public async Task The_data_folder_is_700_and_the_database_files_600_also_when_an_older_server_left_them_wider()
    {
        var dir = TestApp.NewDataDirectory();
        var db = Path.Combine(dir, "teachserve.db");
        using (var app = new TestApp(OnSqlite(), dataDirectory: dir))
        {
            var keys = await app.ReadyProjectAsync();
            await app.StartSessionAsync(keys);
            Assert.Equal(DataFileModes.Folder, File.GetUnixFileMode(dir));
            foreach (var suffix in new[] { "", "-wal", "-shm" })
            {
                Assert.True(File.Exists(db + suffix), suffix);
                Assert.Equal(DataFileModes.File, File.GetUnixFileMode(db + suffix));
            }
            // An older server's modes, as the umask 022 gave them.
            File.SetUnixFileMode(dir, DataFileModes.Folder | UnixFileMode.GroupRead | UnixFileMode.GroupExecute | UnixFileMode.OtherRead | UnixFileMode.OtherExecute);
            foreach (var suffix in new[] { "", "-wal", "-shm" })
                File.SetUnixFileMode(db + suffix, DataFileModes.File | UnixFileMode.GroupRead | UnixFileMode.OtherRead);
        }
        SqliteConnection.ClearAllPools();
        using (var restarted = new TestApp(OnSqlite(), dataDirectory: dir))
        {
            restarted.Client();
            Assert.Equal(DataFileModes.Folder, File.GetUnixFileMode(dir));
            Assert.Equal(DataFileModes.File, File.GetUnixFileMode(db));
            foreach (var suffix in new[] { "-wal", "-shm" })
            {
                if (File.Exists(db + suffix)) Assert.Equal(DataFileModes.File, File.GetUnixFileMode(db + suffix));
            }
        }
        SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    [Fact]
    public async Task Webhook_secrets_are_stored_encrypted_and_signatures_still_use_the_secret()
    {
        await using var receiver = await HookReceiver.StartAsync();
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(HookReceiver.ProjectWithHook(receiver.Url, Secret));

        var stored = await StoredSecretAsync(app, keys.ProjectId);
        Assert.StartsWith(WebhookSecrets.Prefix, stored, StringComparison.Ordinal);
        Assert.DoesNotContain(Secret, stored, StringComparison.Ordinal);

        // A patch that leaves the webhook alone keeps the secret (decrypted, merged, encrypted again).
        await Api.JsonAsync(await app.Client(keys.OwnerKey).PatchAsync($"/api/v1/projects/{keys.ProjectId}",
            Api.RawJson("{\"name\":\"Seam check 2\"}")), 200);
        Assert.Equal(Secret, app.Service<WebhookSecrets>().Reveal(await StoredSecretAsync(app, keys.ProjectId)));

        await TestApp.RunAsync(await app.StartSessionAsync(keys), Honest);
        var delivery = await receiver.NextAsync();
        Assert.True(StandardWebhooksVerifier.Verify(Secret, delivery.Id, delivery.Timestamp, delivery.Signature, delivery.Body, app.Time.GetUtcNow(), Tolerance));
    }

    [Fact]
    public async Task A_plaintext_secret_of_an_older_server_still_signs_is_encrypted_at_the_next_start_and_kept_by_patches()
    {
        await using var receiver = await HookReceiver.StartAsync();
        var dir = TestApp.NewDataDirectory();
        var time = new Microsoft.Extensions.Time.Testing.FakeTimeProvider(new DateTimeOffset(2026, 1, 5, 9, 0, 0, TimeSpan.Zero));
        string projectId, ownerKey;
        using (var app = new TestApp(dataDirectory: dir, time: time))
        {
            var keys = await app.ReadyProjectAsync(HookReceiver.ProjectWithHook(receiver.Url));
            projectId = keys.ProjectId;
            ownerKey = keys.OwnerKey;
            using (var scope = app.Services.CreateScope())
            {
                var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
                await db.Projects.Where(p => p.Id == projectId).ExecuteUpdateAsync(u => u.SetProperty(p => p.WebhookSecret, OlderSecret));
            }
            await TestApp.RunAsync(await app.StartSessionAsync(keys), Honest);
            var delivery = await receiver.NextAsync();
            // The key is the older secret's UTF-8 bytes; a receiver's library takes them as whsec_ + base64.
            var asWhsec = "whsec_" + Convert.ToBase64String(System.Text.Encoding.UTF8.GetBytes(OlderSecret));
            Assert.True(StandardWebhooksVerifier.Verify(asWhsec, delivery.Id, delivery.Timestamp, delivery.Signature, delivery.Body, time.GetUtcNow(), Tolerance));
            Assert.Equal(OlderSecret, await StoredSecretAsync(app, projectId));
        }
        using (var restarted = new TestApp(dataDirectory: dir, time: time))
        {
            restarted.Client();
            var stored = await StoredSecretAsync(restarted, projectId);
            Assert.StartsWith(WebhookSecrets.Prefix, stored, StringComparison.Ordinal);
            Assert.Equal(OlderSecret, restarted.Service<WebhookSecrets>().Reveal(stored));

            // A patch that leaves the webhook alone keeps the older secret; a new secret must have the whsec_ form.
            var owner = restarted.Client(ownerKey);
            await Api.JsonAsync(await owner.PatchAsync($"/api/v1/projects/{projectId}", Api.RawJson("{\"name\":\"Kept secret\"}")), 200);
            Assert.Equal(OlderSecret, restarted.Service<WebhookSecrets>().Reveal(await StoredSecretAsync(restarted, projectId)));
            var refused = await Api.ProblemAsync(await owner.PatchAsync($"/api/v1/projects/{projectId}",
                Api.RawJson($"{{\"releaseWebhook\":{{\"secret\":\"{OlderSecret}-changed\"}}}}")), 422);
            Assert.Contains("releaseWebhook.secret", refused.ToJsonString(), StringComparison.Ordinal);
        }
        SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    private static async Task<string> StoredSecretAsync(TestApp app, string projectId)
    {
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        return (await db.Projects.AsNoTracking().SingleAsync(p => p.Id == projectId)).WebhookSecret!;
    }
}
