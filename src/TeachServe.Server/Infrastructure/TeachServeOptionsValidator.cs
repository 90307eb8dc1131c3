using Microsoft.Extensions.Options;

namespace TeachServe.Server.Infrastructure;

/// <summary>Fails the start with one readable message per misconfigured setting.</summary>
public sealed class TeachServeOptionsValidator : IValidateOptions<TeachServeOptions>
{
    public const int MinAdminKeyLength = 24;

    /// <summary>Any key a bearer header can carry whole, and that the key check cannot take for an owner, embed or session key.</summary>
    public static bool AdminKeyFormIsValid(string key) =>
        key.Length >= MinAdminKeyLength && key.Length <= Auth.ApiKeys.MaxLength
        && key.All(c => c is > ' ' and < (char)127)
        && !key.StartsWith(Auth.ApiKeys.OwnerPrefix + ".", StringComparison.Ordinal)
        && !key.StartsWith(Auth.ApiKeys.EmbedPrefix + ".", StringComparison.Ordinal)
        && !key.StartsWith(Auth.ApiKeys.SessionPrefix + ".", StringComparison.Ordinal);

    public ValidateOptionsResult Validate(string? name, TeachServeOptions o)
    {
        var failures = new List<string>();
        void Check(bool ok, string message)
        {
            if (!ok) failures.Add($"{TeachServeOptions.Section}:{message}");
        }

        Check(o.AdminKey is null || AdminKeyFormIsValid(o.AdminKey),
            $"AdminKey must be {MinAdminKeyLength} to {Auth.ApiKeys.MaxLength} printable characters without spaces, and must not begin " +
            $"with another kind of key's prefix ({Auth.ApiKeys.OwnerPrefix}., {Auth.ApiKeys.EmbedPrefix}., {Auth.ApiKeys.SessionPrefix}.); " +
            "any other form works, e.g. the output of `openssl rand -base64 32` (or leave it unset to have one generated).");
        Check(o.AuditKey is null || o.AuditKey.Length >= 16,
            "AuditKey must be at least 16 characters (or unset, to have one generated).");
        Check(!string.IsNullOrWhiteSpace(o.DataDirectory), "DataDirectory must name a folder.");
        Check(o.SessionIdleTimeout > TimeSpan.Zero, "SessionIdleTimeout must be positive, e.g. \"04:00:00\".");
        Check(o.PublicBaseUrl is null || Uri.TryCreate(o.PublicBaseUrl, UriKind.Absolute, out _),
            "PublicBaseUrl must be an absolute URL such as http://127.0.0.1:5080.");
        Check(o.Database.Provider is DatabaseProviders.Sqlite or DatabaseProviders.Postgres,
            $"Database:Provider must be '{DatabaseProviders.Sqlite}' or '{DatabaseProviders.Postgres}', not '{o.Database.Provider}'.");
        Check(o.Database.Provider != DatabaseProviders.Postgres || !string.IsNullOrWhiteSpace(o.Database.ConnectionString),
            "Database:ConnectionString is required for PostgreSQL.");
        Check(o.RateLimit.PermitLimit > 0, "RateLimit:PermitLimit must be positive.");
        Check(o.Webhooks.MaxConcurrentPerDestination > 0 && o.Webhooks.MaxConcurrentDeliveries >= o.Webhooks.MaxConcurrentPerDestination,
            "Webhooks:MaxConcurrentPerDestination must be positive and at most Webhooks:MaxConcurrentDeliveries.");
        Check(o.Webhooks.BreakerFailures > 0 && o.Webhooks.BreakerCooldown > TimeSpan.Zero,
            "Webhooks:BreakerFailures and Webhooks:BreakerCooldown must be positive.");
        Check(o.RateLimit.Window > TimeSpan.Zero, "RateLimit:Window must be positive.");
        Check(o.Uploads.MaxUploadBytes > 0, "Uploads:MaxUploadBytes must be positive.");
        Check(o.Uploads.MaxItemsPerUpload > 0, "Uploads:MaxItemsPerUpload must be positive.");
        Check(o.Uploads.MaxItemsPerProject >= o.Uploads.MaxItemsPerUpload,
            "Uploads:MaxItemsPerProject must be at least Uploads:MaxItemsPerUpload.");
        Check(o.Webhooks.MaxAttempts is > 0 and <= 100, "Webhooks:MaxAttempts must be between 1 and 100.");
        Check(o.Webhooks.InitialBackoff > TimeSpan.Zero, "Webhooks:InitialBackoff must be positive.");
        Check(o.Webhooks.MaxBackoff >= o.Webhooks.InitialBackoff, "Webhooks:MaxBackoff must be at least Webhooks:InitialBackoff.");
        Check(o.Webhooks.RequestTimeout > TimeSpan.Zero, "Webhooks:RequestTimeout must be positive.");
        Check(o.Webhooks.ConnectTimeout > TimeSpan.Zero && o.Webhooks.ConnectTimeout <= o.Webhooks.RequestTimeout,
            "Webhooks:ConnectTimeout must be positive and at most Webhooks:RequestTimeout.");
        Check(o.Webhooks.PollInterval > TimeSpan.Zero, "Webhooks:PollInterval must be positive.");
        Check(o.Media.ConnectTimeout > TimeSpan.Zero && o.Media.ConnectTimeout <= o.Media.Timeout,
            "Media:ConnectTimeout must be positive and at most Media:Timeout.");
        Check(o.Media.Timeout > TimeSpan.Zero && o.Media.Timeout <= TimeSpan.FromMinutes(1), "Media:Timeout must be positive and at most one minute.");
        Check(o.Media.MaxBytes is > 0 and <= 64 * 1024 * 1024, "Media:MaxBytes must be between 1 and 67108864 (64 MiB).");
        Check(o.Compile.InlineMaxItems >= 0, "Compile:InlineMaxItems must not be negative.");
        Check(o.Compile.MaxConcurrent is > 0 and <= 64, "Compile:MaxConcurrent must be between 1 and 64.");
        Check(o.Compile.MaxVersionsPerProject > 0, "Compile:MaxVersionsPerProject must be positive.");
        Check(o.Cache.MaxModelVersions > 0, "Cache:MaxModelVersions must be positive.");
        Check(o.Cache.MaxSessionStates > 0, "Cache:MaxSessionStates must be positive.");
        Check(o.RateLimit.CredentialPermitLimit > 0, "RateLimit:CredentialPermitLimit must be positive.");
        foreach (var proxy in o.ForwardedHeaders.KnownProxies)
            Check(ForwardedHeaderSetup.TryParse(proxy, out _, out _),
                $"ForwardedHeaders:KnownProxies: '{proxy}' is not an IP address or a network such as 10.0.0.0/8.");

        return failures.Count == 0 ? ValidateOptionsResult.Success : ValidateOptionsResult.Fail(failures);
    }
}
