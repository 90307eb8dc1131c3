using System.Collections.Concurrent;

namespace TeachServe.Server.Sessions;

/// <summary>
/// Per-node cache of each session's in-memory engine state, keyed by session and valid for one step.
/// A miss (or a step that moved on elsewhere) is repaired by replaying the session's events.
/// </summary>
public sealed class SessionStateCache
{
    private readonly ConcurrentDictionary<string, object> _entries = new(StringComparer.Ordinal);

    public void Evict(string sessionId) => _entries.TryRemove(sessionId, out _);
}
