using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;
using TeachServe.Server.Sessions.Store;

namespace TeachServe.Server.Tests;

/// <summary>
/// The annotator hot path reads rows by key without EF on SQLite; it must read exactly what EF reads. The provider's
/// reads are chosen once, when the server starts.
/// </summary>
public sealed class SessionReadsTests
{
    [Fact]
    public async Task The_hot_session_read_returns_every_column_exactly_as_EF_reads_it()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        // Every nullable column filled, with values whose storage could go wrong (offsets, fractions, unicode).
        var ended = new DateTimeOffset(2026, 3, 4, 5, 6, 7, 891, TimeSpan.Zero).AddTicks(2345);
        await db.Sessions.Where(x => x.Id == s.SessionId).ExecuteUpdateAsync(u => u
            .SetProperty(x => x.EndedAt, ended)
            .SetProperty(x => x.EvidenceJson, "{\"note\":\"é ✓\"}")
            .SetProperty(x => x.ExperimentId, "exp_hotread")
            .SetProperty(x => x.ArmIndex, 3)
            .SetProperty(x => x.ArmJson, "{\"name\":\"b\"}")
            .SetProperty(x => x.PredictedError, 0.1234567890123)
            .SetProperty(x => x.IsActive, false));

        var viaEf = await db.Sessions.AsNoTracking().SingleAsync(x => x.Id == s.SessionId);
        var hot = await app.Service<SessionReads>().SessionAsync(db, s.SessionId, CancellationToken.None);

        Assert.NotNull(hot);
        foreach (var property in typeof(Session).GetProperties())
            Assert.Equal(property.GetValue(viaEf), property.GetValue(hot));
        // The SQLite model stores times through a binary converter that keeps about a millisecond; EF decides.
        Assert.InRange((hot.EndedAt!.Value - ended).Duration(), TimeSpan.Zero, TimeSpan.FromMilliseconds(1));
        Assert.Null(await app.Service<SessionReads>().SessionAsync(db, "ses_missing", CancellationToken.None));
    }

    [Fact]
    public async Task The_hot_project_read_and_the_key_hashes_match_what_EF_reads()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var rows = app.Service<SessionReads>();

        var viaEf = await db.Projects.AsNoTracking().SingleAsync(p => p.Id == keys.ProjectId);
        var hot = await rows.ProjectAsync(db, keys.ProjectId, CancellationToken.None);
        Assert.NotNull(hot);
        foreach (var property in typeof(Project).GetProperties().Where(p => db.Model.FindEntityType(typeof(Project))!.FindProperty(p.Name) is not null))
            Assert.Equal(property.GetValue(viaEf), property.GetValue(hot));

        var hashes = await rows.ProjectKeysAsync(db, keys.ProjectId, CancellationToken.None);
        Assert.Equal(viaEf.OwnerKeyHash, hashes!.OwnerKeyHash);
        Assert.Equal(viaEf.EmbedKeyHash, hashes.EmbedKeyHash);
        Assert.Null(await rows.ProjectAsync(db, "prj_missing", CancellationToken.None));
        Assert.Null(await rows.ProjectKeysAsync(db, "prj_missing", CancellationToken.None));
    }

    [Fact]
    public void The_reads_are_one_instance_for_the_whole_server()
    {
        using var app = new TestApp();
        using var one = app.Services.CreateScope();
        using var other = app.Services.CreateScope();
        Assert.Same(one.ServiceProvider.GetRequiredService<SessionReads>(), other.ServiceProvider.GetRequiredService<SessionReads>());
    }

    [Fact]
    public async Task Reads_set_up_for_the_other_provider_refuse_the_context_instead_of_switching_provider_per_call()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var options = app.Service<IOptions<TeachServeOptions>>().Value;
        var onPostgres = options.Database.Provider == DatabaseProviders.Postgres;
        var other = new TeachServeOptions
        {
            Database = new DatabaseOptions { Provider = onPostgres ? DatabaseProviders.Sqlite : DatabaseProviders.Postgres },
        };

        using var wrong = SessionReads.For(other, app.Service<IServiceScopeFactory>());
        var refused = await Assert.ThrowsAsync<InvalidOperationException>(() => wrong.NewestReadyVersionAsync(db, keys.ProjectId, CancellationToken.None));
        Assert.Contains(onPostgres ? nameof(SqliteTeachServeDb) : nameof(PostgresTeachServeDb), refused.Message);

        // The configured provider's reads, chosen the same way, serve the same context.
        using var right = SessionReads.For(options, app.Service<IServiceScopeFactory>());
        Assert.Equal(1, await right.NewestReadyVersionAsync(db, keys.ProjectId, CancellationToken.None));
    }
}
