using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// At start, encrypts webhook secrets still stored in plaintext (written by a server before encryption). Each row
/// is updated only if it still holds the plaintext it was read with, so a concurrent change by another node wins.
/// </summary>
public sealed partial class WebhookSecretsAtRest(WebhookSecrets secrets, ILogger<WebhookSecretsAtRest> logger) : IStartupStep
{
    public async Task RunAsync(TeachServeDb db, StartupBanner banner, CancellationToken ct)
    {
        var plain = await db.Projects.AsNoTracking()
            .Where(p => p.WebhookSecret != null && !p.WebhookSecret.StartsWith(WebhookSecrets.Prefix))
            .Select(p => new { p.Id, p.WebhookSecret }).ToListAsync(ct);
        var changed = 0;
        foreach (var row in plain)
        {
            var seen = row.WebhookSecret;
            var stored = secrets.Protect(seen);
            changed += await db.Projects.Where(p => p.Id == row.Id && p.WebhookSecret == seen)
                .ExecuteUpdateAsync(u => u.SetProperty(p => p.WebhookSecret, stored), ct);
        }
        if (changed > 0) LogEncrypted(logger, changed);
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Encrypted {Count} webhook secret(s) stored in plaintext by an older server")]
    private static partial void LogEncrypted(ILogger logger, int count);
}
