using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Teaching;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;
using SessionOptions = TeachServe.Core.Teaching.SessionOptions;

namespace TeachServe.Server.Sessions;

/// <summary>Gets a session's engine state: from the per-node cache, or by replaying its answer events on its model version.</summary>
public sealed class SessionLoader(ModelVersionCache versions, SessionStateCache states)
{
    /// <param name="testAdministration">The exposure-control K the session started with (see <see cref="Exposure.ExposureCounts"/>).</param>
    /// <param name="refresher">For a refresher, where it starts (stored with it); <paramref name="weights"/> unpacked, if at hand.</param>
    /// <param name="openingVariety">On replay, the opening variety the session started with (its start event); null at the start, where the version's settings and the arm decide.</param>
    public static SessionOptions Options(
        CompiledVersion version, Session session, IReadOnlyList<double>? testAdministration,
        LiveQuality.RefresherStart? refresher = null, double[]? weights = null, int? openingVariety = null)
    {
        var options = SessionOptions.FromProject(version.Settings, unchecked((ulong)session.Seed))
            with { TestAdministration = testAdministration };
        if (refresher is not null)
        {
            var settings = new Core.LiveQuality.RefresherSettings { TargetRuleError = version.Settings.Gate.TargetError, MaxItems = refresher.MaxItems };
            options = Core.LiveQuality.RefresherSessions.Options(options, settings, weights ?? LiveQuality.RefresherStart.Unpack(refresher.Weights));
        }
        else if (session.ArmJson is not null)
        {
            // An experiment arm's overrides were fixed at the start; applying the stored copy keeps replay exact.
            options = Json.Deserialize<Core.Experiments.ArmDefinition>(session.ArmJson).Apply(options);
        }

        return openingVariety is { } opening ? options with { Gate = options.Gate with { OpeningVariety = opening } } : options;
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

    /// <summary>The opening variety the session started with, from its start event (none for sessions older than the setting), so a later change of the setting does not change how it replays.</summary>
    private static async Task<int> OpeningVarietyAsync(TeachServeDb db, string sessionId, CancellationToken ct)
    {
        var started = await db.Events.AsNoTracking().Where(e => e.SessionId == sessionId && e.Type == EventTypes.SessionStarted)
            .Select(e => e.DataJson).FirstOrDefaultAsync(ct);
        return started is not null && JsonDocument.Parse(started).RootElement.TryGetProperty("openingVariety", out var v) ? v.GetInt32() : 0;
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
        var refresher = session.Purpose == SessionPurposes.Refresher
            ? await db.RefresherStarts.AsNoTracking().FirstAsync(r => r.SessionId == session.Id, ct)
            : null;
        var run = SessionRun.Replay(version.Model, Options(version, session, administration, refresher, openingVariety: await OpeningVarietyAsync(db, session.Id, ct)), labels);
        if (run.Step != session.Step)
            throw new InvalidOperationException($"Session {session.Id} has {run.Step} answer events but is at step {session.Step}.");
        return run;
    }
}

/// <summary>
/// Per-node cache of each running session's in-memory engine state, valid for one step. It holds at most
/// <c>TeachServe:Cache:MaxSessionStates</c> sessions (least recently used out first) and never an ended one. A miss
/// (or a step that moved on through another node) is repaired by replaying the session's events. Runs are mutable
/// and not thread-safe, so users hold the session's lock (striped, so memory stays bounded).
/// </summary>
public sealed class SessionStateCache(IOptions<TeachServeOptions> options)
{
    private const int Stripes = 1024;
    private readonly LruIndex<string, (int Step, SessionRun Run)> _entries = new(options.Value.Cache.MaxSessionStates, StringComparer.Ordinal);
    private readonly SemaphoreSlim[] _locks = Enumerable.Range(0, Stripes).Select(_ => new SemaphoreSlim(1, 1)).ToArray();

    /// <summary>Sessions held now; never more than <see cref="Capacity"/>.</summary>
    public int Count => _entries.Count;

    public int Capacity => _entries.Capacity;

    public async Task<IDisposable> LockAsync(string sessionId, CancellationToken ct)
    {
        var gate = _locks[(StringComparer.Ordinal.GetHashCode(sessionId) & int.MaxValue) % Stripes];
        await gate.WaitAsync(ct);
        return new Release(gate);
    }

    public bool TryGet(string sessionId, int step, out SessionRun run)
    {
        if (_entries.TryGet(sessionId, out var entry) && entry.Step == step)
        {
            run = entry.Run;
            return true;
        }
        run = null!;
        return false;
    }

    /// <summary>True if this node holds the session's state (without counting as a use).</summary>
    public bool Contains(string sessionId) => _entries.TryPeek(sessionId, out _);

    /// <summary>True if this node holds the session's state at a step after <paramref name="step"/>.</summary>
    public bool HasLaterStep(string sessionId, int step) => _entries.TryPeek(sessionId, out var entry) && entry.Step > step;

    /// <summary>Keeps a running session's state; an ended session is dropped at once (nothing more is computed for it).</summary>
    public void Put(string sessionId, SessionRun run)
    {
        if (run.IsEnded) _entries.Remove(sessionId);
        else _entries.Set(sessionId, (run.Step, run));
    }

    public void Evict(string sessionId) => _entries.Remove(sessionId);

    private sealed class Release(SemaphoreSlim gate) : IDisposable
    {
        private int _done;

        public void Dispose()
        {
            if (Interlocked.Exchange(ref _done, 1) == 0) gate.Release();
        }
    }
}
