using System.Collections.Concurrent;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Versions;

/// <summary>
/// Per-node cache of compiled model versions. Versions are immutable, so an entry never goes stale; a miss
/// loads the version once (concurrent callers share the work) and checks its fingerprint.
/// </summary>
public sealed partial class ModelVersionCache(IServiceScopeFactory scopes, ILogger<ModelVersionCache> logger)
{
    private readonly ConcurrentDictionary<(string, int), Lazy<Task<CompiledVersion>>> _entries = new();

    public void Put(CompiledVersion version) =>
        _entries[(version.ProjectId, version.Number)] = new Lazy<Task<CompiledVersion>>(Task.FromResult(version));

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
            _entries.TryRemove(new KeyValuePair<(string, int), Lazy<Task<CompiledVersion>>>(key, entry));
            throw;
        }
    }

    private async Task<CompiledVersion> LoadAsync(string projectId, int number)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var record = await db.ModelVersions.AsNoTracking()
            .FirstOrDefaultAsync(v => v.ProjectId == projectId && v.Number == number && v.Status == VersionStatuses.Ready)
            ?? throw ApiProblemException.NotFound($"Model version {number} is not ready.");
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
