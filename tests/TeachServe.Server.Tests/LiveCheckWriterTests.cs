using System.Globalization;
using System.Net;
using System.Net.Http.Json;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.Data.Sqlite;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Npgsql;
using TeachServe.Core.Projects;
using TeachServe.Server.LiveQuality;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Tests;

/// <summary>The live-check writer's group commit: batches sharing a new inline item, and a database that will not take a batch.</summary>
public sealed class LiveCheckWriterTests
{
    private static readonly DateTimeOffset Start = new(2026, 2, 1, 8, 0, 0, TimeSpan.Zero);

    private static readonly LiveItemInput Gold = new()
    {
        Label = "defect", Features = new Dictionary<string, double> { ["x"] = 15 }, Content = new ItemContent { Text = "x=15" },
    };

    private static async Task ReleaseAsync(TestApp app, TestApp.Keys keys, string workerRef)
    {
        var (final, _) = await TestApp.RunAsync(await app.StartSessionAsync(keys, workerRef), (item, _) => TestApp.TruthOf(item));
        Assert.Equal("released", final["phase"]!.GetValue<string>());
    }

    private static JsonObject Outcome(string id, string worker, string itemId, string label, double minute, LiveItemInput? item = null)
    {
        var o = new JsonObject
        {
            ["outcomeId"] = id, ["workerRef"] = worker, ["itemId"] = itemId, ["label"] = label,
            ["answeredAt"] = Start.AddMinutes(minute).ToString("O", CultureInfo.InvariantCulture),
        };
        if (item is not null) o["item"] = JsonSerializer.SerializeToNode(item, Infrastructure.Json.Options);
        return o;
    }

    private static Task<HttpResponseMessage> PostAsync(TestApp app, TestApp.Keys keys, params JsonObject[] outcomes) =>
        app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/live-checks",
            new JsonObject { ["outcomes"] = new JsonArray([.. outcomes.Select(o => o.DeepClone())]) });

    [Fact]
    public async Task One_transaction_of_batches_carrying_the_same_new_item_stores_the_item_once_and_every_batch()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await ReleaseAsync(app, keys, "w1");
        await ReleaseAsync(app, keys, "w2");
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var releases = await db.Releases.AsNoTracking().Where(r => r.ProjectId == keys.ProjectId).ToDictionaryAsync(r => r.WorkerRef);
        PendingLiveChecks Batch(string outcomeId, string worker, string label, int minute) => new()
        {
            ProjectId = keys.ProjectId,
            Lines =
            [
                new LiveQualityOperations.ValidLine(0,
                    new LiveCheckInput { OutcomeId = outcomeId, WorkerRef = worker, ItemId = "fresh-gold", Label = label, AnsweredAt = Start.AddMinutes(minute), Item = Gold },
                    Start.AddMinutes(minute), "defect", releases[worker], Gold.Definition("fresh-gold")),
            ],
        };

        // The group is handed to the transaction directly, so the three batches certainly share it.
        var operations = scope.ServiceProvider.GetRequiredService<LiveQualityOperations>();
        var results = await operations.StoreTogetherAsync(
            [Batch("a", "w1", "defect", 1), Batch("b", "w2", "sound", 2), Batch("c", "w1", "sound", 3)], CancellationToken.None);

        Assert.All(results, r => Assert.True(r.Succeeded, r.Problem?.ProblemDetails.Detail));
        Assert.Equal([1, 1, 1], results.Select(r => r.Value!.Stored));
        Assert.Equal([1, 0, 0], results.Select(r => r.Value!.ItemsStored));
        db.ChangeTracker.Clear();
        Assert.Equal(1, await db.Items.CountAsync(i => i.ProjectId == keys.ProjectId && i.ItemId == "fresh-gold"));
        Assert.Equal(["a", "b", "c"], await db.LiveChecks.Where(c => c.ProjectId == keys.ProjectId).OrderBy(c => c.Id).Select(c => c.OutcomeId).ToListAsync());
    }

    [Fact]
    public async Task Concurrent_batches_carrying_the_same_new_item_each_land_once_with_the_item_stored_once()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await ReleaseAsync(app, keys, "w1");
        const int batches = 24;

        var answers = await Task.WhenAll(Enumerable.Range(0, batches).Select(async b =>
            await Api.JsonAsync(await PostAsync(app, keys,
                Outcome($"o{b}-1", "w1", "fresh-gold", b % 2 == 0 ? "defect" : "sound", b, Gold),
                Outcome($"o{b}-2", "w1", "t03", "sound", b + 0.5)), 200)));

        Assert.All(answers, a => Assert.Equal(2, a["stored"]!.GetValue<int>()));
        Assert.Equal(1, answers.Sum(a => a["itemsStored"]!.GetValue<int>()));
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.Equal(1, await db.Items.CountAsync(i => i.ProjectId == keys.ProjectId && i.ItemId == "fresh-gold"));
        var ids = await db.LiveChecks.Where(c => c.ProjectId == keys.ProjectId).Select(c => c.OutcomeId).ToListAsync();
        Assert.Equal(2 * batches, ids.Count);
        Assert.Equal(2 * batches, ids.Distinct().Count());
        Assert.Equal(2 * batches, (await db.LiveMonitors.SingleAsync(m => m.ProjectId == keys.ProjectId && m.WorkerRef == "w1")).Checks);
    }

    [Fact]
    public async Task A_batch_the_locked_database_will_not_take_is_503_with_Retry_After_stores_nothing_and_lands_once_when_sent_again()
    {
        // A short lock wait, so the writer's tries give up in seconds rather than the default 30 s each.
        var directory = TestApp.NewDataDirectory();
        var settings = new Dictionary<string, string?>();
        if (!TestDatabase.IsPostgres)
        {
            Directory.CreateDirectory(directory);
            settings["TeachServe:Database:ConnectionString"] = $"Data Source={Path.Combine(directory, PersistenceExtensions.DatabaseFileName)};Default Timeout=1";
        }
        try
        {
            await RefusedThenStoredOnceAsync(settings, directory);
        }
        finally
        {
            SqliteConnection.ClearAllPools();
            if (Directory.Exists(directory)) Directory.Delete(directory, recursive: true);
        }
    }

    private static async Task RefusedThenStoredOnceAsync(Dictionary<string, string?> settings, string directory)
    {
        using var app = new TestApp(settings, directory);
        var keys = await app.ReadyProjectAsync();
        await ReleaseAsync(app, keys, "w1");
        JsonObject[] batch = [Outcome("x1", "w1", "t02", "sound", 1), Outcome("x2", "w1", "fresh-gold", "sound", 2, Gold)];

        using (var holder = await HoldWriteLockAsync(app))
        {
            var refused = await PostAsync(app, keys, batch);
            var problem = await Api.ProblemAsync(refused, 503);
            Assert.Equal("5", refused.Headers.GetValues("Retry-After").Single());
            Assert.Contains("nothing of it was stored", problem["detail"]!.GetValue<string>(), StringComparison.Ordinal);
        }

        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            Assert.False(await db.LiveChecks.AnyAsync(c => c.ProjectId == keys.ProjectId));
            Assert.False(await db.Items.AnyAsync(i => i.ProjectId == keys.ProjectId && i.ItemId == "fresh-gold"));
            Assert.False(await db.LiveMonitors.AnyAsync(m => m.ProjectId == keys.ProjectId));
        }

        var stored = await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        Assert.Equal((2, 0, 1), (stored["stored"]!.GetValue<int>(), stored["duplicates"]!.GetValue<int>(), stored["itemsStored"]!.GetValue<int>()));
        var again = await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        Assert.Equal((0, 2, 0), (again["stored"]!.GetValue<int>(), again["duplicates"]!.GetValue<int>(), again["itemsStored"]!.GetValue<int>()));
    }

    /// <summary>
    /// Another connection holding the write lock: on SQLite an immediate transaction; on PostgreSQL an exclusive lock
    /// on the outcomes table (the server then waits at most lock_timeout, set low for this database).
    /// </summary>
    private static async Task<IDisposable> HoldWriteLockAsync(TestApp app)
    {
        if (app.PostgresConnectionString is { } pg)
        {
            await using (var setup = new NpgsqlConnection(pg))
            {
                await setup.OpenAsync();
                await using var alter = new NpgsqlCommand($"ALTER DATABASE \"{app.PostgresDatabase}\" SET lock_timeout = '1s'", setup);
                await alter.ExecuteNonQueryAsync();
            }
            NpgsqlConnection.ClearAllPools();
            var connection = new NpgsqlConnection(pg);
            await connection.OpenAsync();
            var tx = await connection.BeginTransactionAsync();
            await using var lockTable = new NpgsqlCommand("LOCK TABLE \"LiveChecks\" IN ACCESS EXCLUSIVE MODE", connection, tx);
            await lockTable.ExecuteNonQueryAsync();
            return new Held(tx, connection);
        }
        var sqlite = new SqliteConnection($"Data Source={Path.Combine(app.DataDirectory, PersistenceExtensions.DatabaseFileName)};Pooling=False");
        await sqlite.OpenAsync();
        var immediate = (SqliteTransaction)await sqlite.BeginTransactionAsync();
        return new Held(immediate, sqlite);
    }

    private sealed class Held(System.Data.Common.DbTransaction tx, System.Data.Common.DbConnection connection) : IDisposable
    {
        public void Dispose()
        {
            tx.Rollback();
            tx.Dispose();
            connection.Dispose();
        }
    }
}
