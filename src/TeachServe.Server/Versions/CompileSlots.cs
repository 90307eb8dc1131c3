using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Versions;

/// <summary>
/// The node's compile slots (<c>TeachServe:Compile:MaxConcurrent</c>): every compile, inline or in the background,
/// holds one while it runs, so compiles cannot take every core and the memory of several models at once from
/// the annotators of other projects.
/// </summary>
public sealed class CompileSlots : IDisposable
{
    private readonly SemaphoreSlim _slots;
    private readonly System.Collections.Concurrent.ConcurrentDictionary<string, byte> _projects = new(StringComparer.Ordinal);

    public CompileSlots(IOptions<TeachServeOptions> options)
    {
        Capacity = options.Value.Compile.MaxConcurrent;
        _slots = new SemaphoreSlim(Capacity, Capacity);
    }

    public int Capacity { get; }

    /// <summary>Compiles running on this node now.</summary>
    public int Running => Capacity - _slots.CurrentCount;

    /// <summary>Takes a slot if one is free now; an inline compile that gets none goes to the background queue.</summary>
    public bool TryEnter() => _slots.Wait(0);

    public Task EnterAsync(CancellationToken ct) => _slots.WaitAsync(ct);

    public void Exit() => _slots.Release();

    /// <summary>
    /// Claims a project's compile request on this node, or null while another request of the project is being
    /// handled here: reading and hashing a large snapshot costs about as much CPU as a small compile, so
    /// concurrent requests of one project are refused before they read anything. (Across nodes the database's
    /// one-compiling-row index decides.)
    /// </summary>
    public IDisposable? TryClaimProject(string projectId) =>
        _projects.TryAdd(projectId, 0) ? new ProjectClaim(_projects, projectId) : null;

    public void Dispose() => _slots.Dispose();

    private sealed class ProjectClaim(System.Collections.Concurrent.ConcurrentDictionary<string, byte> projects, string projectId) : IDisposable
    {
        private int _done;

        public void Dispose()
        {
            if (Interlocked.Exchange(ref _done, 1) == 0) projects.TryRemove(projectId, out _);
        }
    }
}
