using Microsoft.Extensions.Options;

namespace TeachServe.Server.Infrastructure;

/// <summary>Fails the start with one readable message per misconfigured setting.</summary>
public sealed class TeachServeOptionsValidator : IValidateOptions<TeachServeOptions>
{
    public const int MinAdminKeyLength = 24;

    public ValidateOptionsResult Validate(string? name, TeachServeOptions o)
    {
        var failures = new List<string>();
        void Check(bool ok, string message)
        {
            if (!ok) failures.Add($"{TeachServeOptions.Section}:{message}");
        }

        Check(o.AdminKey is null || o.AdminKey.Length >= MinAdminKeyLength,
            $"AdminKey must be at least {MinAdminKeyLength} characters (or unset, to have one generated).");
        Check(!string.IsNullOrWhiteSpace(o.DataDirectory), "DataDirectory must name a folder.");
        Check(o.SessionIdleTimeout > TimeSpan.Zero, "SessionIdleTimeout must be positive, e.g. \"04:00:00\".");
        Check(o.PublicBaseUrl is null || Uri.TryCreate(o.PublicBaseUrl, UriKind.Absolute, out _),
            "PublicBaseUrl must be an absolute URL such as http://127.0.0.1:5080.");
        Check(o.Database.Provider is DatabaseProviders.Sqlite or DatabaseProviders.Postgres,
            $"Database:Provider must be '{DatabaseProviders.Sqlite}' or '{DatabaseProviders.Postgres}', not '{o.Database.Provider}'.");
        Check(o.Database.Provider != DatabaseProviders.Postgres || !string.IsNullOrWhiteSpace(o.Database.ConnectionString),
            "Database:ConnectionString is required for PostgreSQL.");
        Check(o.RateLimit.PermitLimit > 0, "RateLimit:PermitLimit must be positive.");
        Check(o.RateLimit.Window > TimeSpan.Zero, "RateLimit:Window must be positive.");
        Check(o.Uploads.MaxUploadBytes > 0, "Uploads:MaxUploadBytes must be positive.");
        Check(o.Uploads.MaxItemsPerUpload > 0, "Uploads:MaxItemsPerUpload must be positive.");
        Check(o.Uploads.MaxItemsPerProject >= o.Uploads.MaxItemsPerUpload,
            "Uploads:MaxItemsPerProject must be at least Uploads:MaxItemsPerUpload.");
        Check(o.Webhooks.MaxAttempts is > 0 and <= 100, "Webhooks:MaxAttempts must be between 1 and 100.");
        Check(o.Webhooks.InitialBackoff > TimeSpan.Zero, "Webhooks:InitialBackoff must be positive.");
        Check(o.Webhooks.MaxBackoff >= o.Webhooks.InitialBackoff, "Webhooks:MaxBackoff must be at least Webhooks:InitialBackoff.");
        Check(o.Webhooks.RequestTimeout > TimeSpan.Zero, "Webhooks:RequestTimeout must be positive.");
        Check(o.Webhooks.PollInterval > TimeSpan.Zero, "Webhooks:PollInterval must be positive.");
        Check(o.Compile.InlineMaxItems >= 0, "Compile:InlineMaxItems must not be negative.");

        return failures.Count == 0 ? ValidateOptionsResult.Success : ValidateOptionsResult.Fail(failures);
    }
}
