namespace TeachServe.Server.Infrastructure;

/// <summary>Everything an operator can set, bound from the <c>TeachServe</c> configuration section.</summary>
public sealed class TeachServeOptions
{
    public const string Section = "TeachServe";

    /// <summary>Server admin key. When unset, one is generated on first start, printed once and stored hashed.</summary>
    public string? AdminKey { get; set; }

    /// <summary>
    /// Key of the audit log's worker subjects (HMAC-SHA256), at least 16 characters. When unset, one is generated on
    /// first start and stored in the database; nodes sharing a database share it.
    /// </summary>
    public string? AuditKey { get; set; }

    /// <summary>Folder for the SQLite database (relative paths are resolved against the working directory).</summary>
    public string DataDirectory { get; set; } = "data";

    /// <summary>Load the <c>leaf-symptoms</c> demo project on first start.</summary>
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
    public CacheOptions Cache { get; set; } = new();
    public ForwardedHeaderSettings ForwardedHeaders { get; set; } = new();
    public MediaOptions Media { get; set; } = new();
}

/// <summary>
/// The server's fetch of test items' images, which it serves to annotators under opaque per-session addresses
/// so the owner's address (which may name the item or its label) never reaches them.
/// </summary>
public sealed class MediaOptions
{
    /// <summary>Also fetch from loopback, private and link-local addresses: for single-host and test setups only.</summary>
    public bool AllowPrivateNetworks { get; set; }
    public TimeSpan ConnectTimeout { get; set; } = TimeSpan.FromSeconds(3);
    /// <summary>The whole fetch, body included.</summary>
    public TimeSpan Timeout { get; set; } = TimeSpan.FromSeconds(10);
    public long MaxBytes { get; set; } = 5 * 1024 * 1024;
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

    /// <summary>
    /// Attempts per client address and window at the two doors that take a secret without a key (launch-link
    /// redemption and console sign-in); on top of <see cref="PermitLimit"/>, and per address, so one client
    /// cannot lock anybody else out.
    /// </summary>
    public int CredentialPermitLimit { get; set; } = 30;
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
    /// <summary>Time to open the connection to a receiver; shorter than the attempt so an unreachable host frees its slot soon.</summary>
    public TimeSpan ConnectTimeout { get; set; } = TimeSpan.FromSeconds(3);
    /// <summary>Deliveries in flight at once to one destination (scheme, host, port), per node.</summary>
    public int MaxConcurrentPerDestination { get; set; } = 4;
    /// <summary>Deliveries in flight at once in all, per node.</summary>
    public int MaxConcurrentDeliveries { get; set; } = 64;
    /// <summary>Consecutive failed attempts after which a destination's circuit opens.</summary>
    public int BreakerFailures { get; set; } = 5;
    /// <summary>How long an open circuit posts nothing before one trial is let through.</summary>
    public TimeSpan BreakerCooldown { get; set; } = TimeSpan.FromMinutes(1);
    /// <summary>How often the outbox is scanned when nothing signals new work.</summary>
    public TimeSpan PollInterval { get; set; } = TimeSpan.FromSeconds(30);
    /// <summary>Also deliver to loopback, private and link-local addresses (a receiver on the same host or network).</summary>
    public bool AllowPrivateNetworks { get; set; }
}

public sealed class CompileOptions
{
    /// <summary>Projects with at most this many items compile within the request; larger ones in the background.</summary>
    public int InlineMaxItems { get; set; } = 5_000;

    /// <summary>Compiles running at once on this node (inline and background); a compile beyond them waits in the background queue (202).</summary>
    public int MaxConcurrent { get; set; } = 1;

    /// <summary>Model versions a project may hold (ready, failed or compiling); one more compile is refused with 409.</summary>
    public int MaxVersionsPerProject { get; set; } = 100;
}

public sealed class CacheOptions
{
    /// <summary>Compiled model versions kept in memory per node (least recently used first out; a miss reloads from the database).</summary>
    public int MaxModelVersions { get; set; } = 8;

    /// <summary>Running sessions whose engine state is kept in memory per node (least recently used first out; a miss replays events).</summary>
    public int MaxSessionStates { get; set; } = 4096;
}

public sealed class ForwardedHeaderSettings
{
    /// <summary>
    /// Addresses (<c>10.0.0.5</c>) or networks (<c>172.18.0.0/16</c>) of the reverse proxies whose <c>X-Forwarded-For</c>
    /// is believed. Empty (the default): the header is ignored and the client is the connection's peer.
    /// </summary>
    public List<string> KnownProxies { get; set; } = [];
}
