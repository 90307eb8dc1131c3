using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Http.Headers;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using HdrHistogram;

namespace TeachServe.Load;

/// <summary>An answer the server acknowledged (200), as the client saw it.</summary>
public sealed record AcknowledgedAnswer(string SessionId, int Step, string ItemRef, string Label, string Response);

/// <summary>A live-check outcome the server acknowledged (200, in a batch it stored or had stored before).</summary>
public sealed record AcknowledgedOutcome(string OutcomeId, string WorkerRef, string ItemId, string Label, bool Wrong, DateTimeOffset AnsweredAt);

/// <summary>A session the harness started, with the token its annotator used.</summary>
public sealed record StartedSession(string SessionId, string Token);

/// <summary>
/// Simulated annotators running whole sessions (start, next, answer … to the end, then a new session) against
/// a running server, plus a bare baseline endpoint measured with the same client and concurrency. In live-checks mode
/// the annotators are first released (answering truthfully), then senders post batches of their live-check outcomes.
/// </summary>
public sealed class LoadRunner(LoadOptions options, TextWriter log) : IDisposable
{
    public const string Start = "start";
    public const string Next = "next";
    public const string Answer = "answer";
    public const string LiveChecks = "live-checks";
    public const string Baseline = "healthz";

    private readonly HttpClient _http = new(new SocketsHttpHandler
    {
        MaxConnectionsPerServer = options.Annotators + 4,
        PooledConnectionLifetime = Timeout.InfiniteTimeSpan,
        UseCookies = false,
        UseProxy = false,
    })
    { BaseAddress = options.Url, Timeout = TimeSpan.FromSeconds(30) };

    private long _requests;
    private readonly object _gate = new();
    private readonly List<AcknowledgedAnswer> _acknowledged = [];
    private readonly List<StartedSession> _sessions = [];
    private readonly List<AcknowledgedOutcome> _outcomes = [];
    private readonly List<string> _released = [];

    private readonly List<(int Count, TaskCompletionSource Reached)> _ackWaiters = [];

    public IReadOnlyList<AcknowledgedAnswer> Acknowledged { get { lock (_gate) return _acknowledged.ToList(); } }
    public IReadOnlyList<AcknowledgedOutcome> AcknowledgedOutcomes { get { lock (_gate) return _outcomes.ToList(); } }
    /// <summary>The annotators released for live-checks mode, by worker ref.</summary>
    public IReadOnlyList<string> Released { get { lock (_gate) return _released.ToList(); } }

    private int AcknowledgedCount => _acknowledged.Count + _outcomes.Count;

    /// <summary>
    /// Completes once at least <paramref name="count"/> answers (live-checks mode: outcomes) have been acknowledged
    /// (needs RecordAcknowledged).
    /// </summary>
    public Task WhenAcknowledgedAsync(int count)
    {
        lock (_gate)
        {
            if (AcknowledgedCount >= count) return Task.CompletedTask;
            var reached = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
            _ackWaiters.Add((count, reached));
            return reached.Task;
        }
    }
    public IReadOnlyList<StartedSession> Sessions { get { lock (_gate) return _sessions.ToList(); } }
    public string? ProjectId { get; private set; }
    public string? OwnerKey { get; private set; }
    public string? EmbedKey { get; private set; }

    public void Dispose() => _http.Dispose();

    public async Task<LoadReport> RunAsync(CancellationToken ct)
    {
        options.Validate();
        var (projectId, embedKey) = await ProjectAsync(ct);
        (ProjectId, EmbedKey) = (projectId, embedKey);
        if (options.Mode == LoadMode.LiveChecks) await ReleaseAllAsync(embedKey, ct);

        Phase? baseline = null;
        if (options.BaselineDuration > TimeSpan.Zero)
        {
            log.WriteLine($"baseline: GET /healthz, {options.Annotators} clients, {options.BaselineDuration.TotalSeconds:0.#} s");
            baseline = await RunPhaseAsync(options.BaselineDuration, TimeSpan.FromSeconds(Math.Min(1, options.Warmup.TotalSeconds)),
                (w, p, c) => BaselineWorkerAsync(w, p, c), ct);
        }
        if (options.Mode == LoadMode.LiveChecks)
        {
            log.WriteLine($"live checks: {options.Annotators} senders, batches of {options.BatchSize}, {options.Warmup.TotalSeconds:0.#} s warm-up + {options.Duration.TotalSeconds:0.#} s");
            var posted = await RunPhaseAsync(options.Duration, options.Warmup,
                (w, p, c) => SenderWorkerAsync(w, p, projectId, embedKey, c), ct);
            return LoadReport.From(options, posted, baseline);
        }
        log.WriteLine($"sessions: {options.Annotators} annotators, {options.Warmup.TotalSeconds:0.#} s warm-up + {options.Duration.TotalSeconds:0.#} s");
        var sessions = await RunPhaseAsync(options.Duration, options.Warmup,
            (w, p, c) => AnnotatorWorkerAsync(w, p, projectId, embedKey, c), ct);
        return LoadReport.From(options, sessions, baseline);
    }

    // ---- phases: N workers, each with its own histograms, merged at the end ----

    public sealed class Phase
    {
        public Dictionary<string, LongHistogram> Latency { get; } = [];
        public Dictionary<string, long> Errors { get; } = [];
        public long Cycles { get; set; }
        /// <summary>Live-check outcomes in acknowledged batches (live-checks mode).</summary>
        public long Outcomes { get; set; }
        public long Requests { get; set; }
        public long SessionsEnded { get; set; }
        public TimeSpan Measured { get; set; }
    }

    private sealed class Worker(int index, long measureFrom)
    {
        public int Index { get; } = index;
        public long MeasureFrom { get; } = measureFrom;
        public Phase Result { get; } = new();
        public Random Random { get; } = new(index);
        /// <summary>When the next answer cycle is due (paced runs only).</summary>
        public long NextCycleAt { get; set; }

        public bool Measuring => Stopwatch.GetTimestamp() >= MeasureFrom;

        public void Record(string endpoint, long startedAt)
        {
            if (startedAt < MeasureFrom) return;
            if (!Result.Latency.TryGetValue(endpoint, out var h))
                Result.Latency[endpoint] = h = new LongHistogram(60_000_000, 3);
            h.RecordValue(Math.Max(1, (long)Stopwatch.GetElapsedTime(startedAt).TotalMicroseconds));
            Result.Requests++;
        }

        public void Error(string what)
        {
            if (!Measuring) what += " (warm-up)";
            Result.Errors[what] = Result.Errors.GetValueOrDefault(what) + 1;
        }
    }

    private async Task<Phase> RunPhaseAsync(TimeSpan duration, TimeSpan warmup, Func<Worker, Func<bool>, CancellationToken, Task> body, CancellationToken ct)
    {
        var begin = Stopwatch.GetTimestamp();
        var measureFrom = begin + (long)(warmup.TotalSeconds * Stopwatch.Frequency);
        var end = measureFrom + (long)(duration.TotalSeconds * Stopwatch.Frequency);
        bool Go() => !ct.IsCancellationRequested && Stopwatch.GetTimestamp() < end && Interlocked.Read(ref _requests) < options.MaxRequests;
        var workers = Enumerable.Range(0, options.Annotators)
            .Select(i => new Worker(options.Seed * 100_003 + i, measureFrom)).ToList();
        await Task.WhenAll(workers.Select(w => Task.Run(() => body(w, Go, ct), CancellationToken.None)));
        var stopped = Stopwatch.GetTimestamp();
        var merged = new Phase { Measured = Stopwatch.GetElapsedTime(Math.Min(measureFrom, stopped), stopped) };
        foreach (var w in workers)
        {
            foreach (var (endpoint, h) in w.Result.Latency)
            {
                if (merged.Latency.TryGetValue(endpoint, out var into)) into.Add(h);
                else merged.Latency[endpoint] = (LongHistogram)h.Copy();
            }
            foreach (var (what, n) in w.Result.Errors) merged.Errors[what] = merged.Errors.GetValueOrDefault(what) + n;
            merged.Cycles += w.Result.Cycles;
            merged.Outcomes += w.Result.Outcomes;
            merged.Requests += w.Result.Requests;
            merged.SessionsEnded += w.Result.SessionsEnded;
        }
        return merged;
    }

    private async Task BaselineWorkerAsync(Worker w, Func<bool> go, CancellationToken ct)
    {
        while (go())
        {
            Interlocked.Increment(ref _requests);
            var t = Stopwatch.GetTimestamp();
            try
            {
                using var response = await _http.GetAsync("/healthz", ct);
                await response.Content.ReadAsByteArrayAsync(ct);
                if (response.IsSuccessStatusCode) w.Record(Baseline, t);
                else w.Error($"{Baseline} {(int)response.StatusCode}");
            }
            catch (Exception e) when (e is HttpRequestException or TaskCanceledException && !ct.IsCancellationRequested)
            {
                w.Error($"{Baseline} {e.GetType().Name}");
                if (options.TolerateErrors) return;
            }
        }
    }

    private async Task AnnotatorWorkerAsync(Worker w, Func<bool> go, string projectId, string embedKey, CancellationToken ct)
    {
        var n = 0;
        try
        {
            while (go())
            {
                var workerRef = $"load-{options.Seed}-{w.Index}-{n++}";
                var (status, started) = await SendAsync(w, Start, HttpMethod.Post, $"/api/v1/projects/{projectId}/sessions", embedKey,
                    new JsonObject { ["workerRef"] = workerRef }, ct);
                if (status != 201) continue;
                var sessionId = started!["sessionId"]!.GetValue<string>();
                var token = started["token"]!.GetValue<string>();
                lock (_gate) if (options.RecordAcknowledged) _sessions.Add(new StartedSession(sessionId, token));
                await RunSessionAsync(w, go, sessionId, token, ct);
            }
        }
        catch (Exception e) when (options.TolerateErrors && e is HttpRequestException or TaskCanceledException or OperationCanceledException)
        {
            w.Error(e.GetType().Name);
        }
    }

    private async Task RunSessionAsync(Worker w, Func<bool> go, string sessionId, string token, CancellationToken ct)
    {
        // Bounded: a session has at most a few hundred steps; the phase deadline bounds it in time too.
        for (var i = 0; i < 10_000 && go(); i++)
        {
            var due = await PaceAsync(w, 1, ct);
            var (status, next) = await SendAsync(w, Next, HttpMethod.Get, $"/api/v1/sessions/{sessionId}/next", token, null, ct, due);
            if (status != 200) return;
            if (next!["item"] is not JsonObject item)
            {
                if (w.Measuring) w.Result.SessionsEnded++;
                return;
            }
            var step = next["step"]!.GetValue<int>();
            var itemRef = item["ref"]!.GetValue<string>();
            var label = Choose(w.Random, item);
            var (answered, body) = await SendAsync(w, Answer, HttpMethod.Post, $"/api/v1/sessions/{sessionId}/answers", token,
                new JsonObject { ["step"] = step, ["itemRef"] = itemRef, ["label"] = label }, ct);
            if (answered != 200) return;
            if (w.Measuring) w.Result.Cycles++;
            if (options.RecordAcknowledged)
                lock (_gate)
                {
                    _acknowledged.Add(new AcknowledgedAnswer(sessionId, step, itemRef, label, body!.ToJsonString()));
                    _ackWaiters.RemoveAll(x => AcknowledgedCount >= x.Count && x.Reached.TrySetResult());
                }
            if (body!["phase"]!.GetValue<string>() is "released" or "failed")
            {
                if (w.Measuring) w.Result.SessionsEnded++;
                return;
            }
        }
    }

    /// <summary>
    /// Paced runs: waits until the worker's next cycle (of <paramref name="units"/> answer cycles or outcomes) is due and
    /// returns when it was due; null when closed loop.
    /// </summary>
    private async Task<long?> PaceAsync(Worker w, int units, CancellationToken ct)
    {
        if (options.Rate is not { } rate) return null;
        // Each worker's cycles are due every annotators·units/rate seconds, staggered by its index. A cycle
        // that is late starts at once and its latency counts from when it was due (no coordinated
        // omission: a slow server cannot hide its queue by slowing the client down).
        var interval = (long)(options.Annotators * units / rate * Stopwatch.Frequency);
        var now = Stopwatch.GetTimestamp();
        if (w.NextCycleAt == 0) w.NextCycleAt = now + interval * (w.Index % options.Annotators) / options.Annotators;
        // A backlog from the warm-up (e.g. while the server's JIT was still compiling) is forgiven once.
        if (!w.Measuring && w.NextCycleAt < now) w.NextCycleAt = now;
        var wait = Stopwatch.GetElapsedTime(Stopwatch.GetTimestamp(), w.NextCycleAt);
        if (wait > TimeSpan.Zero) await Task.Delay(wait, ct);
        var due = w.NextCycleAt;
        w.NextCycleAt += interval;
        return due;
    }

    // ---- live-checks mode: released annotators, then senders posting their outcomes ----

    /// <summary>The released annotators' refs: `live-{seed}-{n}`, n = 0 .. released − 1.</summary>
    private string ReleasedRef(int n) => $"live-{options.Seed}-{n}";

    /// <summary>Releases every annotator of the run, --annotators at a time, each answering every item truthfully.</summary>
    private async Task ReleaseAllAsync(string embedKey, CancellationToken ct)
    {
        var started = Stopwatch.GetTimestamp();
        await Task.WhenAll(Enumerable.Range(0, options.Annotators).Select(s => Task.Run(async () =>
        {
            for (var n = s; n < options.ReleasedCount; n += options.Annotators) await ReleaseOneAsync(ReleasedRef(n), embedKey, ct);
        }, ct)));
        lock (_gate) _released.AddRange(Enumerable.Range(0, options.ReleasedCount).Select(ReleasedRef));
        log.WriteLine($"released {options.ReleasedCount} annotators in {Stopwatch.GetElapsedTime(started).TotalSeconds:0.0} s");
    }

    private async Task ReleaseOneAsync(string workerRef, string embedKey, CancellationToken ct)
    {
        var started = await SetupAsync(HttpMethod.Post, $"/api/v1/projects/{ProjectId}/sessions", embedKey,
            JsonContent(new JsonObject { ["workerRef"] = workerRef }), 201, ct);
        var sessionId = started["sessionId"]!.GetValue<string>();
        var token = started["token"]!.GetValue<string>();
        // Bounded: 20 teaching items and a 12-item test.
        for (var i = 0; i < 100; i++)
        {
            var next = await SetupAsync(HttpMethod.Get, $"/api/v1/sessions/{sessionId}/next", token, null, 200, ct);
            if (next["item"] is not JsonObject item) break;
            var body = new JsonObject { ["step"] = next["step"]!.GetValue<int>(), ["itemRef"] = item["ref"]!.GetValue<string>(), ["label"] = TruthOf(item) };
            var answered = await SetupAsync(HttpMethod.Post, $"/api/v1/sessions/{sessionId}/answers", token, JsonContent(body), 200, ct);
            if (answered["phase"]!.GetValue<string>() is "released") return;
        }
        throw new InvalidOperationException($"{workerRef} answered every item truthfully and was not released.");
    }

    /// <summary>The harness project's items with their true labels (see <see cref="ProjectAsync"/>).</summary>
    private static readonly (string Id, string Truth)[] LiveItems =
    [
        .. Enumerable.Range(0, 40).Select(i => ($"t{i:00}", i * 0.5 < 10 ? "sound" : "defect")),
        .. Enumerable.Range(0, 30).Select(i => ($"h{i:00}", i * 20.0 / 30 + 0.25 < 10 ? "sound" : "defect")),
    ];

    private static readonly DateTimeOffset LiveEpoch = new(2026, 1, 1, 0, 0, 0, TimeSpan.Zero);

    /// <summary>
    /// One sender: posts batches of outcomes of its own annotators (those whose number is its index modulo the
    /// senders), each answered a millisecond after the sender's previous one, so every annotator's outcomes arrive in
    /// the order answered. Outcome ids are unique per run: `o{seed}-{sender}-{n}`.
    /// </summary>
    private async Task SenderWorkerAsync(Worker w, Func<bool> go, string projectId, string embedKey, CancellationToken ct)
    {
        var own = Enumerable.Range(0, options.ReleasedCount).Where(n => n % options.Annotators == w.Index % options.Annotators).Select(ReleasedRef).ToArray();
        var n = 0L;
        try
        {
            while (go())
            {
                var batch = new List<AcknowledgedOutcome>(options.BatchSize);
                for (var k = 0; k < options.BatchSize; k++, n++)
                {
                    var (itemId, truth) = LiveItems[w.Random.Next(LiveItems.Length)];
                    var label = w.Random.NextDouble() < options.Honesty ? truth : (w.Random.Next(2) == 0 ? "sound" : "defect");
                    batch.Add(new AcknowledgedOutcome($"o{options.Seed}-{w.Index}-{n}", own[w.Random.Next(own.Length)], itemId, label,
                        label != truth, LiveEpoch.AddMilliseconds(n)));
                }
                var due = await PaceAsync(w, options.BatchSize, ct);
                var outcomes = new JsonArray([.. batch.Select(o => (JsonNode)new JsonObject
                {
                    ["outcomeId"] = o.OutcomeId, ["workerRef"] = o.WorkerRef, ["itemId"] = o.ItemId, ["label"] = o.Label,
                    ["answeredAt"] = o.AnsweredAt.ToString("O", CultureInfo.InvariantCulture),
                })]);
                var (status, _) = await SendAsync(w, LiveChecks, HttpMethod.Post, $"/api/v1/projects/{projectId}/live-checks", embedKey,
                    new JsonObject { ["outcomes"] = outcomes }, ct, due);
                if (status != 200) continue;
                if (w.Measuring) w.Result.Outcomes += batch.Count;
                if (options.RecordAcknowledged)
                    lock (_gate)
                    {
                        _outcomes.AddRange(batch);
                        _ackWaiters.RemoveAll(x => AcknowledgedCount >= x.Count && x.Reached.TrySetResult());
                    }
            }
        }
        catch (Exception e) when (options.TolerateErrors && e is HttpRequestException or TaskCanceledException or OperationCanceledException)
        {
            w.Error(e.GetType().Name);
        }
    }

    private string Choose(Random random, JsonObject item)
    {
        var labels = item["labels"]!.AsArray().Select(l => l!.GetValue<string>()).ToArray();
        var truth = TruthOf(item);
        return truth is not null && random.NextDouble() < options.Honesty ? truth : labels[random.Next(labels.Length)];
    }

    /// <summary>The harness's own items say "x=N" and are "defect" from 10 up; other projects' truth is unknown.</summary>
    private static string? TruthOf(JsonObject item) =>
        item["content"]?["text"]?.GetValue<string>() is { } text && text.StartsWith("x=", StringComparison.Ordinal)
        && double.TryParse(text.AsSpan(2), NumberStyles.Float, CultureInfo.InvariantCulture, out var x)
            ? (x < 10 ? "sound" : "defect")
            : null;

    private async Task<(int Status, JsonNode? Body)> SendAsync(
        Worker w, string endpoint, HttpMethod method, string path, string key, JsonObject? body, CancellationToken ct, long? due = null)
    {
        Interlocked.Increment(ref _requests);
        using var request = new HttpRequestMessage(method, path);
        request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", key);
        if (body is not null) request.Content = new StringContent(body.ToJsonString(), Encoding.UTF8, "application/json");
        var t = due ?? Stopwatch.GetTimestamp();
        try
        {
            using var response = await _http.SendAsync(request, ct);
            var bytes = await response.Content.ReadAsByteArrayAsync(ct);
            var status = (int)response.StatusCode;
            if (response.IsSuccessStatusCode)
            {
                w.Record(endpoint, t);
                return (status, JsonNode.Parse(bytes));
            }
            w.Error($"{endpoint} {status}");
            return (status, null);
        }
        catch (Exception e) when (!options.TolerateErrors && e is HttpRequestException or TaskCanceledException && !ct.IsCancellationRequested)
        {
            w.Error($"{endpoint} {e.GetType().Name}");
            return (0, null);
        }
    }

    // ---- the harness's own project: items whose truth is readable from the content ----

    private async Task<(string ProjectId, string EmbedKey)> ProjectAsync(CancellationToken ct)
    {
        if (options.AdminKey is null) return (options.ProjectId!, options.EmbedKey!);
        var project = new JsonObject
        {
            ["name"] = $"Load test {options.Seed}",
            ["labels"] = new JsonArray("sound", "defect"),
            ["family"] = new JsonObject { ["kind"] = "stumps" },
            ["policy"] = "adaptive",
            ["gate"] = new JsonObject
            {
                ["targetError"] = 0.1, ["confidence"] = 0.8, ["maxTeachingItems"] = 20, ["retakes"] = 0,
                ["test"] = new JsonObject { ["mode"] = "fixed", ["maxItems"] = 12, ["delta"] = 0.6 },
            },
        };
        if (options.Webhook is { } hook)
            project["releaseWebhook"] = new JsonObject { ["url"] = hook.ToString(), ["secret"] = "whsec_" + Convert.ToBase64String(System.Security.Cryptography.RandomNumberGenerator.GetBytes(32)) };
        var created = await SetupAsync(HttpMethod.Post, "/api/v1/projects", options.AdminKey, JsonContent(project), 201, ct);
        var projectId = created["projectId"]!.GetValue<string>();
        OwnerKey = created["ownerKey"]!.GetValue<string>();
        var items = new StringBuilder();
        for (var i = 0; i < 40; i++) items.Append(ItemLine($"t{i:00}", "teach", i * 0.5)).Append('\n');
        for (var i = 0; i < 30; i++) items.Append(ItemLine($"h{i:00}", "test", i * 20.0 / 30 + 0.25)).Append('\n');
        await SetupAsync(HttpMethod.Post, $"/api/v1/projects/{projectId}/items", OwnerKey,
            new StringContent(items.ToString(), Encoding.UTF8, "application/x-ndjson"), 200, ct);
        await SetupAsync(HttpMethod.Post, $"/api/v1/projects/{projectId}/versions", OwnerKey, null, 201, ct);
        log.WriteLine($"project {projectId} created with 40 teach and 30 test items, model version 1");
        return (projectId, created["embedKey"]!.GetValue<string>());
    }

    private static string ItemLine(string id, string pool, double x) => new JsonObject
    {
        ["id"] = id, ["pool"] = pool, ["label"] = x < 10 ? "sound" : "defect",
        ["features"] = new JsonObject { ["x"] = x },
        ["content"] = new JsonObject { ["text"] = "x=" + x.ToString(CultureInfo.InvariantCulture) },
        ["explanation"] = x < 10 ? "below 10" : "at or above 10",
    }.ToJsonString();

    private static StringContent JsonContent(JsonNode body) => new(body.ToJsonString(), Encoding.UTF8, "application/json");

    private async Task<JsonNode> SetupAsync(HttpMethod method, string path, string key, HttpContent? content, int expected, CancellationToken ct)
    {
        using var request = new HttpRequestMessage(method, path) { Content = content };
        request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", key);
        using var response = await _http.SendAsync(request, ct);
        var text = await response.Content.ReadAsStringAsync(ct);
        if ((int)response.StatusCode != expected)
            throw new InvalidOperationException($"{method} {path}: expected {expected}, got {(int)response.StatusCode}: {text}");
        return JsonNode.Parse(text)!;
    }
}
