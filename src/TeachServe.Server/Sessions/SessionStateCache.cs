using Microsoft.Extensions.Options;
using TeachServe.Core.Teaching;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Sessions;

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
