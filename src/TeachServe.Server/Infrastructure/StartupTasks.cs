using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Server.Auth;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// Runs before the server accepts requests: migrate, settle the admin key, load the demo project on first
/// start, then print what a newcomer needs. Registered first so other hosted services find the database ready.
/// </summary>
public sealed partial class StartupTasks(
    IServiceScopeFactory scopes,
    IOptions<TeachServeOptions> options,
    AdminKeyStore adminKeys,
    StartupState state,
    StartupBanner banner,
    ILogger<StartupTasks> logger) : IHostedService
{
    public const string AdminKeyHashSetting = "admin-key-hash";

    public async Task StartAsync(CancellationToken cancellationToken)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var o = options.Value;
        await PersistenceExtensions.MigrateAsync(db, o, cancellationToken);
        LogMigrated(logger, db.Database.ProviderName ?? "?");

        await SettleAdminKeyAsync(db, o, cancellationToken);
        foreach (var task in scope.ServiceProvider.GetServices<IStartupStep>())
            await task.RunAsync(db, banner, cancellationToken);

        state.MarkReady();
        if (o.PrintStartupBanner) banner.Print();
    }

    public Task StopAsync(CancellationToken cancellationToken) => Task.CompletedTask;

    private async Task SettleAdminKeyAsync(TeachServeDb db, TeachServeOptions o, CancellationToken ct)
    {
        if (o.AdminKey is { } configured)
        {
            adminKeys.Set(ApiKeys.Hash(configured));
            banner.Add("Admin key", "(from configuration: TeachServe:AdminKey)");
            return;
        }
        var stored = await db.ServerSettings.FirstOrDefaultAsync(s => s.Key == AdminKeyHashSetting, ct);
        if (stored is not null)
        {
            adminKeys.Set(Convert.FromHexString(stored.Value));
            banner.Add("Admin key", "(generated on first start and shown then; set TeachServe__AdminKey to choose one)");
            return;
        }
        var key = ApiKeys.NewAdminKey();
        var hash = ApiKeys.Hash(key);
        db.ServerSettings.Add(new ServerSetting { Key = AdminKeyHashSetting, Value = Convert.ToHexString(hash) });
        await db.SaveChangesAsync(ct);
        adminKeys.Set(hash);
        banner.Add("Admin key", $"{key}   (shown once; stored hashed)");
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Database migrated ({Provider})")]
    private static partial void LogMigrated(ILogger logger, string provider);
}

/// <summary>Startup work of a feature (demo project, resuming compile jobs), run in registration order.</summary>
public interface IStartupStep
{
    Task RunAsync(TeachServeDb db, StartupBanner banner, CancellationToken ct);
}
