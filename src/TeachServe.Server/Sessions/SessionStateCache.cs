using System.Collections.Concurrent;
using TeachServe.Core.Teaching;

namespace TeachServe.Server.Sessions;

/// <summary>
/// Per-node cache of each session's in-memory engine state, valid for one step. A miss (or a step that moved
/// on through another node) is repaired by replaying the session's events. Runs are mutable and not
/// thread-safe, so users hold the session's lock (striped, so memory stays bounded).
/// </summary>
public sealed class SessionStateCache
{
    private const int Stripes = 1024;
    private readonly ConcurrentDictionary<string, (int Step, SessionRun Run)> _entries = new(StringComparer.Ordinal);
    private readonly SemaphoreSlim[] _locks = Enumerable.Range(0, Stripes).Select(_ => new SemaphoreSlim(1, 1)).ToArray();

    public async Task<IDisposable> LockAsync(string sessionId, CancellationToken ct)
    {
        var gate = _locks[(StringComparer.Ordinal.GetHashCode(sessionId) & int.MaxValue) % Stripes];
        await gate.WaitAsync(ct);
        return new Release(gate);
    }

    public bool TryGet(string sessionId, int step, out SessionRun run)
    {
        if (_entries.TryGetValue(sessionId, out var entry) && entry.Step == step)
        {
            run = entry.Run;
            return true;
        }
        run = null!;
        return false;
    }

    /// <summary>True if this node holds the session's state at a step after <paramref name="step"/>.</summary>
    public bool HasLaterStep(string sessionId, int step) => _entries.TryGetValue(sessionId, out var entry) && entry.Step > step;

    public void Put(string sessionId, SessionRun run) => _entries[sessionId] = (run.Step, run);

    public void Evict(string sessionId) => _entries.TryRemove(sessionId, out _);

    private sealed class Release(SemaphoreSlim gate) : IDisposable
    {
        private int _done;

        public void Dispose()
        {
            if (Interlocked.Exchange(ref _done, 1) == 0) gate.Release();
        }
    }
}
