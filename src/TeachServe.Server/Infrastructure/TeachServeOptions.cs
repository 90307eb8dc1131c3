namespace TeachServe.Server.Infrastructure;

/// <summary>Everything an operator can set, bound from the <c>TeachServe</c> configuration section.</summary>
public sealed class TeachServeOptions
{
    public const string Section = "TeachServe";

    /// <summary>Server admin key. When unset, one is generated on first start, printed once and stored hashed.</summary>
    public string? AdminKey { get; set; }

    /// <summary>Folder for the SQLite database (relative paths are resolved against the working directory).</summary>
    public string DataDirectory { get; set; } = "data";

    /// <summary>Load the <c>weld-seams</c> demo project on first start.</summary>
    public bool LoadDemo { get; set; } = true;

    /// <summary>Folder of the demo project (project.json + items.jsonl); defaults to the copy shipped beside the server.</summary>
    public string? DemoProjectDirectory { get; set; }

    /// <summary>Base address used in annotator launch links; defaults to the address of the incoming request.</summary>
    public string? PublicBaseUrl { get; set; }

    /// <summary>Write the keys and demo link to standard output on first start.</summary>
    public bool PrintStartupBanner { get; set; } = true;

    /// <summary>A session token stops working after this long without use.</summary>
    public TimeSpan SessionIdleTimeout { get; set; } = TimeSpan.FromHours(4);

    public DatabaseOptions Database { get; set; } = new();
    public RateLimitOptions RateLimit { get; set; } = new();
    public UploadOptions Uploads { get; set; } = new();
    public WebhookOptions Webhooks { get; set; } = new();
    public CompileOptions Compile { get; set; } = new();
}

public sealed class DatabaseOptions
{
    /// <summary><c>sqlite</c> (default) or <c>postgres</c>.</summary>
    public string Provider { get; set; } = DatabaseProviders.Sqlite;

    /// <summary>Connection string; for SQLite it defaults to <c>{DataDirectory}/teachserve.db</c>.</summary>
    public string? ConnectionString { get; set; }
}

public static class DatabaseProviders
{
    public const string Sqlite = "sqlite";
    public const string Postgres = "postgres";
}

public sealed class RateLimitOptions
{
    /// <summary>Requests per key (or per client address without a key) in one window.</summary>
    public int PermitLimit { get; set; } = 1200;
    public TimeSpan Window { get; set; } = TimeSpan.FromMinutes(1);
}

public sealed class UploadOptions
{
    public long MaxUploadBytes { get; set; } = 32 * 1024 * 1024;
    public int MaxItemsPerUpload { get; set; } = 50_000;
    public int MaxItemsPerProject { get; set; } = 100_000;
}

public sealed class WebhookOptions
{
    public int MaxAttempts { get; set; } = 15;
    public TimeSpan InitialBackoff { get; set; } = TimeSpan.FromSeconds(10);
    public TimeSpan MaxBackoff { get; set; } = TimeSpan.FromHours(1);
    public TimeSpan RequestTimeout { get; set; } = TimeSpan.FromSeconds(10);
    /// <summary>How often the outbox is scanned when nothing signals new work.</summary>
    public TimeSpan PollInterval { get; set; } = TimeSpan.FromSeconds(30);
}

public sealed class CompileOptions
{
    /// <summary>Projects with at most this many items compile within the request; larger ones in the background.</summary>
    public int InlineMaxItems { get; set; } = 5_000;
}
