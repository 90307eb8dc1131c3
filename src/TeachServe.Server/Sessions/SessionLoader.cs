using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Teaching;
using SessionOptions = TeachServe.Core.Teaching.SessionOptions;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Sessions;

/// <summary>Gets a session's engine state: from the per-node cache, or by replaying its answer events on its model version.</summary>
public sealed class SessionLoader(ModelVersionCache versions, SessionStateCache states)
{
    /// <param name="testAdministration">The exposure-control K the session started with (see <see cref="Exposure.ExposureCounts"/>).</param>
    public static SessionOptions Options(CompiledVersion version, Session session, IReadOnlyList<double>? testAdministration)
    {
        var options = SessionOptions.FromProject(version.Settings, unchecked((ulong)session.Seed)) with { TestAdministration = testAdministration };
        // An experiment arm's overrides were fixed at the start; applying the stored copy keeps replay exact.
        return session.ArmJson is null ? options : Json.Deserialize<Core.Experiments.ArmDefinition>(session.ArmJson).Apply(options);
    }

    /// <summary>Call with the session's lock held.</summary>
    public async Task<(CompiledVersion Version, SessionRun Run)> LoadAsync(TeachServeDb db, Session session, CancellationToken ct)
    {
        var version = await versions.GetAsync(session.ProjectId, session.ModelVersion, ct);
        if (states.TryGet(session.Id, session.Step, out var run)) return (version, run);
        run = await ReplayAsync(db, version, session, ct);
        states.Put(session.Id, run);
        return (version, run);
    }

    /// <summary>Rebuilds the state from the event log alone (DESIGN 3: the log is the source of truth).</summary>
    public static async Task<SessionRun> ReplayAsync(TeachServeDb db, CompiledVersion version, Session session, CancellationToken ct)
    {
        var data = await db.Events.AsNoTracking()
            // Only the answers the session row has seen: on several nodes another node may have committed the next
            // answer between reading the row and reading the events; its optimistic step check then decides.
            .Where(e => e.SessionId == session.Id && e.Type == EventTypes.Answer && e.Step < session.Step)
            .OrderBy(e => e.Step).Select(e => e.DataJson).ToListAsync(ct);
        var labels = data.Select(d => JsonDocument.Parse(d).RootElement.GetProperty("labelIndex").GetInt32());
        var administration = await Exposure.ExposureCounts.OfSessionAsync(db, version, session.Id, ct);
        var run = SessionRun.Replay(version.Model, Options(version, session, administration), labels);
        if (run.Step != session.Step)
            throw new InvalidOperationException($"Session {session.Id} has {run.Step} answer events but is at step {session.Step}.");
        return run;
    }
}
