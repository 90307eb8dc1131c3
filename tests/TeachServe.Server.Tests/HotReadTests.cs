using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Tests;

/// <summary>The annotator hot path reads rows by key without EF on SQLite; it must read exactly what EF reads.</summary>
public sealed class HotReadTests
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
        var hot = await HotQueries.SessionAsync(db, app.Service<SqliteRowReader<Session>>(), s.SessionId, CancellationToken.None);

        Assert.NotNull(hot);
        foreach (var property in typeof(Session).GetProperties())
            Assert.Equal(property.GetValue(viaEf), property.GetValue(hot));
        // The SQLite model stores times through a binary converter that keeps about a millisecond; EF decides.
        Assert.InRange((hot.EndedAt!.Value - ended).Duration(), TimeSpan.Zero, TimeSpan.FromMilliseconds(1));
        Assert.Null(await HotQueries.SessionAsync(db, app.Service<SqliteRowReader<Session>>(), "ses_missing", CancellationToken.None));
    }

    [Fact]
    public async Task The_hot_project_read_and_the_key_hashes_match_what_EF_reads()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var rows = app.Service<SqliteRowReader<Project>>();

        var viaEf = await db.Projects.AsNoTracking().SingleAsync(p => p.Id == keys.ProjectId);
        var hot = await HotQueries.ProjectAsync(db, rows, keys.ProjectId, CancellationToken.None);
        Assert.NotNull(hot);
        foreach (var property in typeof(Project).GetProperties().Where(p => db.Model.FindEntityType(typeof(Project))!.FindProperty(p.Name) is not null))
            Assert.Equal(property.GetValue(viaEf), property.GetValue(hot));

        var hashes = await HotQueries.ProjectKeysAsync(db, rows, keys.ProjectId, CancellationToken.None);
        Assert.Equal(viaEf.OwnerKeyHash, hashes!.OwnerKeyHash);
        Assert.Equal(viaEf.EmbedKeyHash, hashes.EmbedKeyHash);
        Assert.Null(await HotQueries.ProjectAsync(db, rows, "prj_missing", CancellationToken.None));
        Assert.Null(await HotQueries.ProjectKeysAsync(db, rows, "prj_missing", CancellationToken.None));
    }
}
