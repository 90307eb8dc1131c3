using System.Globalization;
using System.Text;
using System.Text.Json;
using System.Text.Json.Serialization;
using HdrHistogram;

namespace TeachServe.Load;

public sealed record EndpointFigures(string Endpoint, long Count, double PerSecond, double P50Ms, double P95Ms, double P99Ms, double MaxMs);

/// <summary>The result of one run: throughput, latency per endpoint, errors, and the ratio to the bare baseline.</summary>
public sealed record LoadReport(
    int Annotators,
    double? OfferedRate,
    double MeasuredSeconds,
    long AnswerCycles,
    double AnswerCyclesPerSecond,
    double RequestsPerSecond,
    long SessionsEnded,
    IReadOnlyList<EndpointFigures> Endpoints,
    EndpointFigures? Baseline,
    double? ThroughputRatio,
    IReadOnlyDictionary<string, long> Errors,
    string Mode = "sessions",
    int? Batch = null,
    long Outcomes = 0,
    double OutcomesPerSecond = 0)
{
    public long ErrorCount => Errors.Values.Sum();

    public static LoadReport From(LoadOptions options, LoadRunner.Phase sessions, LoadRunner.Phase? baseline)
    {
        var seconds = Math.Max(1e-9, sessions.Measured.TotalSeconds);
        var endpoints = new[] { LoadRunner.Start, LoadRunner.Next, LoadRunner.Answer, LoadRunner.LiveChecks }
            .Where(sessions.Latency.ContainsKey)
            .Select(e => Figures(e, sessions.Latency[e], seconds)).ToList();
        var base_ = baseline is not null && baseline.Latency.TryGetValue(LoadRunner.Baseline, out var bh)
            ? Figures(LoadRunner.Baseline, bh, Math.Max(1e-9, baseline.Measured.TotalSeconds))
            : null;
        var errors = new SortedDictionary<string, long>(sessions.Errors, StringComparer.Ordinal);
        if (baseline is not null) foreach (var (k, v) in baseline.Errors) errors[k] = errors.GetValueOrDefault(k) + v;
        var rps = sessions.Requests / seconds;
        var live = options.Mode == LoadMode.LiveChecks;
        return new LoadReport(options.Annotators, options.Rate, seconds, sessions.Cycles, sessions.Cycles / seconds, rps, sessions.SessionsEnded,
            endpoints, base_, base_ is null ? null : rps / base_.PerSecond, errors,
            live ? "live-checks" : "sessions", live ? options.BatchSize : null, sessions.Outcomes, sessions.Outcomes / seconds);
    }

    private static EndpointFigures Figures(string endpoint, LongHistogram h, double seconds)
    {
        static double Ms(long micros) => micros / 1000.0;
        return new EndpointFigures(endpoint, h.TotalCount, h.TotalCount / seconds,
            Ms(h.GetValueAtPercentile(50)), Ms(h.GetValueAtPercentile(95)), Ms(h.GetValueAtPercentile(99)), Ms(h.GetValueAtPercentile(100)));
    }

    private static readonly JsonSerializerOptions JsonOptions = new()
    {
        WriteIndented = true,
        PropertyNamingPolicy = JsonNamingPolicy.CamelCase,
        NumberHandling = JsonNumberHandling.AllowNamedFloatingPointLiterals,
    };

    public string ToJson() => JsonSerializer.Serialize(this, JsonOptions);

    public string ToTable()
    {
        var s = new StringBuilder();
        var c = CultureInfo.InvariantCulture;
        if (Batch is { } batch)
        {
            var paced = OfferedRate is { } o ? string.Create(c, $" paced to {o:0} outcomes/s,") : " closed loop,";
            s.AppendLine(c, $"{Annotators} senders, batches of {batch},{paced} {MeasuredSeconds:0.0} s measured: {OutcomesPerSecond:0} outcomes/s, {RequestsPerSecond:0} requests/s, {ErrorCount} errors");
        }
        else
        {
            var pace = OfferedRate is { } r ? string.Create(c, $" paced to {r:0} cycles/s,") : " closed loop,";
            s.AppendLine(c, $"{Annotators} annotators,{pace} {MeasuredSeconds:0.0} s measured: {AnswerCyclesPerSecond:0} answer cycles/s, {RequestsPerSecond:0} requests/s, {SessionsEnded} sessions ended, {ErrorCount} errors");
        }
        s.AppendLine("| endpoint | requests | per s | p50 ms | p95 ms | p99 ms | max ms |");
        s.AppendLine("|---|---:|---:|---:|---:|---:|---:|");
        foreach (var e in Baseline is null ? Endpoints : [.. Endpoints, Baseline])
            s.AppendLine(c, $"| {e.Endpoint} | {e.Count} | {e.PerSecond:0} | {e.P50Ms:0.00} | {e.P95Ms:0.00} | {e.P99Ms:0.00} | {e.MaxMs:0.00} |");
        if (ThroughputRatio is { } ratio)
            s.AppendLine(c, $"{(Batch is null ? "session" : "live-checks")} requests/s ÷ bare /healthz requests/s = {ratio:0.000} (1 : {1 / ratio:0.0})");
        foreach (var (what, n) in Errors) s.AppendLine(c, $"error: {what} × {n}");
        return s.ToString();
    }
}
