using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Versions;

/// <summary>
/// Per-node cache of compiled model versions, holding at most <c>TeachServe:Cache:MaxModelVersions</c> (least
/// recently used out first: a large version takes tens of megabytes). Versions are immutable, so an entry never
/// goes stale; a miss loads the version from its stored blob once (concurrent callers share the work) and checks
/// its fingerprint.
/// </summary>
public sealed partial class ModelVersionCache(
    IServiceScopeFactory scopes, IOptions<TeachServeOptions> options, ILogger<ModelVersionCache> logger)
{
    private readonly LruIndex<(string, int), Lazy<Task<CompiledVersion>>> _entries = new(options.Value.Cache.MaxModelVersions);

    /// <summary>Versions held now; never more than <see cref="Capacity"/>.</summary>
    public int Count => _entries.Count;

    public int Capacity => _entries.Capacity;

    /// <summary>True if this node holds the version (without counting as a use).</summary>
    public bool Contains(string projectId, int number) => _entries.TryPeek((projectId, number), out _);

    public void Put(CompiledVersion version) =>
        _entries.Set((version.ProjectId, version.Number), new Lazy<Task<CompiledVersion>>(Task.FromResult(version)));

    public async Task<CompiledVersion> GetAsync(string projectId, int number, CancellationToken ct)
    {
        var key = (projectId, number);
        var entry = _entries.GetOrAdd(key, _ => new Lazy<Task<CompiledVersion>>(() => LoadAsync(projectId, number)));
        try
        {
            return await entry.Value.WaitAsync(ct);
        }
        catch (Exception) when (entry.Value.IsFaulted)
        {
            _entries.Remove(key, entry);
            throw;
        }
    }

    private async Task<CompiledVersion> LoadAsync(string projectId, int number)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var record = await db.ModelVersions.AsNoTracking()
            .FirstOrDefaultAsync(v => v.ProjectId == projectId && v.Number == number && v.Status == VersionStatuses.Ready)
            // Callers pass versions they found ready (ready is final), so a miss is a broken invariant, not a request error.
            ?? throw new InvalidOperationException($"Model version {number} of {projectId} is not ready or does not exist.");
        var compiled = await Task.Run(() => VersionCompiler.Load(record, CancellationToken.None));
        if (compiled.Model.HypothesisCount != record.HypothesisCount || compiled.Model.TargetIndex != record.TargetIndex)
        {
            LogFingerprintMismatch(logger, projectId, number);
            throw new InvalidOperationException($"Model version {number} of {projectId} did not load identically.");
        }
        return compiled;
    }

    [LoggerMessage(Level = LogLevel.Critical, Message = "Model version {Number} of {ProjectId} loaded differently from its first compile")]
    private static partial void LogFingerprintMismatch(ILogger logger, string projectId, int number);
}
