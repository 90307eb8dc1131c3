using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Events;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Sessions.Store;

namespace TeachServe.Server.Tests;

public sealed class GroupCommitWriterTests
{
    [Fact]
    public async Task Writes_of_one_step_resolve_as_if_sequential_one_wins_and_only_its_rows_are_stored()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var loop = app.Service<GroupCommitWriter>();
        var now = app.Time.GetUtcNow();
        PendingAnswer Write(string label) => new()
        {
            SessionId = s.SessionId, FromStep = 0, ToStep = 1, Phase = Phases.Teaching, IsActive = true, PredictedError = 0.5,
            TaughtCount = 1, TestAnswered = 0, Now = now, EndedAt = null, EvidenceJson = null,
            Rows = [new SessionEvent { ProjectId = keys.ProjectId, SessionId = s.SessionId, Type = EventTypes.Answer, Step = 0, At = now, DataJson = $"{{\"label\":\"{label}\"}}" }],
        };

        var results = await Task.WhenAll(Enumerable.Range(0, 6).Select(i => loop.CommitAsync(Write($"l{i}"), CancellationToken.None)));

        Assert.Equal(1, results.Count(r => r));
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        Assert.Equal(1, await db.Sessions.Where(x => x.Id == s.SessionId).Select(x => x.Step).SingleAsync());
        var stored = await db.Events.Where(e => e.SessionId == s.SessionId && e.Type == EventTypes.Answer).Select(e => e.DataJson).ToListAsync();
        Assert.Equal($"{{\"label\":\"l{Array.IndexOf(results, true)}\"}}", Assert.Single(stored));
    }
}
