using System.Globalization;
using System.Net;

namespace TeachServe.Load;

/// <summary>What the simulated clients do: run whole annotator sessions, or post live-check outcomes of released annotators.</summary>
public enum LoadMode
{
    Sessions,
    LiveChecks,
}

/// <summary>What one load run does; every loop in it is bounded by <see cref="Duration"/> and <see cref="MaxRequests"/>.</summary>
public sealed record LoadOptions
{
    public const int MaxBatch = 1000;
    public const int DefaultBatch = 10;
    public const int DefaultReleased = 256;

    public LoadMode Mode { get; init; } = LoadMode.Sessions;
    /// <summary>Outcomes per live-checks request (live-checks mode; null there = <see cref="DefaultBatch"/>).</summary>
    public int? Batch { get; init; }
    /// <summary>Annotators released before outcomes are posted (live-checks mode; null there = <see cref="DefaultReleased"/>).</summary>
    public int? Released { get; init; }

    public Uri Url { get; init; } = new("http://127.0.0.1:5080");
    /// <summary>With an admin key the harness creates its own project (whose truth it can read off the content).</summary>
    public string? AdminKey { get; init; }
    public string? ProjectId { get; init; }
    public string? EmbedKey { get; init; }
    public int Annotators { get; init; } = 64;
    public TimeSpan Duration { get; init; } = TimeSpan.FromSeconds(20);
    public TimeSpan Warmup { get; init; } = TimeSpan.FromSeconds(2);
    public TimeSpan BaselineDuration { get; init; } = TimeSpan.FromSeconds(5);
    public long MaxRequests { get; init; } = 2_000_000;
    /// <summary>Chance that a simulated annotator answers with the true label (when it knows it); otherwise at random.</summary>
    public double Honesty { get; init; } = 0.9;
    public int Seed { get; init; } = 1;
    /// <summary>
    /// Offered load in answer cycles per second over all annotators; null = closed loop (each annotator sends its
    /// next request as soon as the last one is answered, which measures the most the server can do).
    /// </summary>
    public double? Rate { get; init; }
    public int BatchSize => Batch ?? DefaultBatch;
    public int ReleasedCount => Released ?? DefaultReleased;
    public bool Json { get; init; }
    /// <summary>Release webhook of the harness's own project (loopback only), so the load includes outbox deliveries.</summary>
    public Uri? Webhook { get; init; }
    /// <summary>Keep every acknowledged answer (for the crash test).</summary>
    public bool RecordAcknowledged { get; init; }
    /// <summary>Keep going after errors (for the crash test, where the server is killed mid-run).</summary>
    public bool TolerateErrors { get; init; }

    public const string Usage = """
        teachserve-load [options]   simulated annotators against a running TeachServe server (loopback only)
          --url URL               server address (default http://127.0.0.1:5080)
          --admin-key KEY         create a project of its own with this admin key, or:
          --project ID --embed-key KEY   start sessions in an existing project (answers at random)
          --mode M                sessions (default): annotators run whole sessions; live-checks: first release
                                  --released annotators, then --annotators senders post their outcomes (needs --admin-key)
          --batch N               outcomes per live-checks request, 1 to 1000 (live-checks mode; default 10)
          --released N            annotators released before the outcomes, at least --annotators (live-checks mode; default 256)
          --annotators N          concurrent simulated annotators, or outcome senders (default 64)
          --duration S            seconds of session load, after warm-up (default 20)
          --warmup S              seconds of load before measuring (default 2)
          --baseline S            seconds of /healthz with the same client and concurrency (default 5; 0 = none)
          --max-requests N        stop after this many requests in all (default 2000000)
          --honesty P             chance of answering (live checks: of an outcome being right) with the true label (default 0.9)
          --seed N                seed of the annotators' choices (default 1)
          --rate R                pace the annotators to R answer cycles/s in all (live checks: R outcomes/s in all;
                                  default: as fast as answered); latency then counts from when each cycle was due
          --json                  print the report as JSON
          --webhook URL           give the harness's own project a release webhook to this loopback URL
        """;

    public static LoadOptions Parse(string[] args)
    {
        var o = new LoadOptions();
        for (var i = 0; i < args.Length; i++)
        {
            string Value() => i + 1 < args.Length ? args[++i] : throw new ArgumentException($"{args[i]} needs a value.");
            double Number() => double.Parse(Value(), CultureInfo.InvariantCulture);
            o = args[i] switch
            {
                "--url" => o with { Url = new Uri(Value()) },
                "--admin-key" => o with { AdminKey = Value() },
                "--project" => o with { ProjectId = Value() },
                "--embed-key" => o with { EmbedKey = Value() },
                "--mode" => o with { Mode = Value() switch
                {
                    "sessions" => LoadMode.Sessions,
                    "live-checks" => LoadMode.LiveChecks,
                    var m => throw new ArgumentException($"--mode must be sessions or live-checks, not {m}."),
                } },
                "--batch" => o with { Batch = (int)Number() },
                "--released" => o with { Released = (int)Number() },
                "--annotators" => o with { Annotators = (int)Number() },
                "--duration" => o with { Duration = TimeSpan.FromSeconds(Number()) },
                "--warmup" => o with { Warmup = TimeSpan.FromSeconds(Number()) },
                "--baseline" => o with { BaselineDuration = TimeSpan.FromSeconds(Number()) },
                "--max-requests" => o with { MaxRequests = (long)Number() },
                "--honesty" => o with { Honesty = Number() },
                "--seed" => o with { Seed = (int)Number() },
                "--rate" => o with { Rate = Number() },
                "--json" => o with { Json = true },
                "--webhook" => o with { Webhook = new Uri(Value()) },
                _ => throw new ArgumentException($"Unknown option {args[i]}."),
            };
        }
        o.Validate();
        return o;
    }

    public void Validate()
    {
        if (!IsLoopback(Url)) throw new ArgumentException($"{Url} is not a loopback address; this harness only loads this machine.");
        if (AdminKey is null && (ProjectId is null || EmbedKey is null))
            throw new ArgumentException("Give --admin-key, or --project and --embed-key.");
        if (Annotators is < 1 or > 1024) throw new ArgumentException("--annotators must be 1 to 1024.");
        if (Duration <= TimeSpan.Zero || Duration > TimeSpan.FromHours(1)) throw new ArgumentException("--duration must be above 0 and at most 3600 s.");
        if (Warmup < TimeSpan.Zero || BaselineDuration < TimeSpan.Zero) throw new ArgumentException("--warmup and --baseline cannot be negative.");
        if (MaxRequests < 1) throw new ArgumentException("--max-requests must be at least 1.");
        if (Webhook is { } hook && (!IsLoopback(hook) || AdminKey is null))
            throw new ArgumentException("--webhook must be a loopback URL, and needs --admin-key (it is set on the harness's own project).");
        if (Rate is { } r && (!(r > 0) || r > 1_000_000)) throw new ArgumentException("--rate must be above 0 and at most 1000000.");
        if (Mode == LoadMode.Sessions && (Batch is not null || Released is not null))
            throw new ArgumentException("--batch and --released need --mode live-checks.");
        if (Mode == LoadMode.LiveChecks)
        {
            if (AdminKey is null) throw new ArgumentException("--mode live-checks needs --admin-key: the harness releases annotators in a project of its own.");
            if (BatchSize is < 1 or > MaxBatch) throw new ArgumentException($"--batch must be 1 to {MaxBatch}.");
            // Each sender posts the outcomes of its own annotators, so a worker's outcomes arrive in the order answered.
            if (ReleasedCount < Annotators || ReleasedCount > 10_000) throw new ArgumentException("--released must be at least --annotators and at most 10000.");
            if (Webhook is not null) throw new ArgumentException("--webhook is for --mode sessions.");
        }
    }

    public static bool IsLoopback(Uri url) =>
        url.IsLoopback || (IPAddress.TryParse(url.Host.Trim('[', ']'), out var ip) && IPAddress.IsLoopback(ip));
}
