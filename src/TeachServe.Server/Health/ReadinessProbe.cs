using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Health;

/// <summary>
/// The answer of <c>/readyz</c>, checked against the database at most once per <see cref="Lifetime"/> on this
/// node: concurrent probes share one check, and every other probe gets the last answer. A flood of probes then
/// costs the database nothing more than one query every two seconds.
/// </summary>
public sealed class ReadinessProbe(IServiceScopeFactory scopes, StartupState startup, TimeProvider time) : IDisposable
{
    /// <summary>Long enough to absorb a flood, short enough for a load balancer to notice an outage within a probe or two.</summary>
    public static readonly TimeSpan Lifetime = TimeSpan.FromSeconds(2);

    private readonly SemaphoreSlim _checking = new(1, 1);
    // A reference, so a probe reads a whole answer while another thread replaces or forgets it.
    private volatile Answer? _last;
    private int _checks;

    /// <summary>Database checks made so far (for tests and diagnostics).</summary>
    public int Checks => Volatile.Read(ref _checks);

    /// <summary>Null when ready, else why not.</summary>
    public async Task<string?> ProblemAsync(CancellationToken ct)
    {
        if (!startup.IsReady) return "The server is still starting (migrations, demo project).";
        if (Fresh() is { } cached) return cached.Problem;
        await _checking.WaitAsync(ct);
        try
        {
            if (Fresh() is { } again) return again.Problem;
            var problem = await CheckAsync(ct);
            _last = new Answer(time.GetUtcNow(), problem);
            return problem;
        }
        finally
        {
            _checking.Release();
        }
    }

    /// <summary>
    /// Drops the cached answer, so the next probe asks the database again. Called when a request has just found
    /// the database unreachable: a balancer must not hear "ready" for up to <see cref="Lifetime"/> after this
    /// node has answered 503 to a client.
    /// </summary>
    public void Forget() => _last = null;

    private Answer? Fresh() =>
        _last is { } last && time.GetUtcNow() - last.At < Lifetime ? last : null;

    private sealed record Answer(DateTimeOffset At, string? Problem);

    public void Dispose() => _checking.Dispose();

    private async Task<string?> CheckAsync(CancellationToken ct)
    {
        Interlocked.Increment(ref _checks);
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        try
        {
            if (!await db.Database.CanConnectAsync(ct)) return "The database cannot be reached.";
            var pending = await db.Database.GetPendingMigrationsAsync(ct);
            return pending.Any() ? $"Migrations not applied: {string.Join(", ", pending)}." : null;
        }
        catch (Exception e) when (e is not OperationCanceledException)
        {
            return "The database cannot be reached.";
        }
    }
}
