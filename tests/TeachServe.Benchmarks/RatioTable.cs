using System.Globalization;
using BenchmarkDotNet.Reports;

namespace TeachServe.Benchmarks;

/// <summary>One table per run: the step timings of every case and their ratios, all from the same run.</summary>
public static class RatioTable
{
    public static void Print(IReadOnlyList<Summary> summaries, TextWriter output)
    {
        var results = new Dictionary<(string Case, string Name), (double MeanNs, long? Bytes)>();
        foreach (var report in summaries.SelectMany(s => s.Reports))
        {
            var benchmark = report.BenchmarkCase;
            if (report.ResultStatistics is null || benchmark.Parameters["Case"] is not string benchCase)
            {
                continue;
            }

            var name = benchmark.Descriptor.WorkloadMethodDisplayInfo.Trim('\'');
            results[(benchCase, name)] = (report.ResultStatistics.Mean, report.GcStats.GetBytesAllocatedPerOperation(benchmark));
        }

        if (results.Count == 0)
        {
            return;
        }

        string Time(string benchCase, string name) => results.TryGetValue((benchCase, name), out var r) ? FormatTime(r.MeanNs) : "–";
        string Ratio(string benchCase, string over, string under) =>
            results.TryGetValue((benchCase, over), out var a) && results.TryGetValue((benchCase, under), out var b)
                ? (a.MeanNs / b.MeanNs).ToString("0.00", CultureInfo.InvariantCulture) + "×"
                : "–";
        string Bytes(string benchCase, string name) =>
            results.TryGetValue((benchCase, name), out var r) && r.Bytes is { } bytes ? FormatBytes(bytes) : "–";

        var projectCases = results.Keys.Where(k => k.Name.StartsWith("project compile", StringComparison.Ordinal)).Select(k => k.Case).Distinct().ToList();
        if (projectCases.Count > 0)
        {
            output.WriteLine();
            output.WriteLine("## TeachServe project compile benchmarks (one run)");
            output.WriteLine();
            output.WriteLine("| project (items x features x labels) | compile | reference | reference / compile | allocated |");
            output.WriteLine("|---|---|---|---|---|");
            foreach (var benchCase in projectCases.OrderBy(c => int.Parse(c.Split(' ')[0], CultureInfo.InvariantCulture)))
            {
                output.WriteLine(
                    $"| {benchCase} | {Time(benchCase, "project compile")} | {Time(benchCase, "project compile, reference")} | " +
                    $"{Ratio(benchCase, "project compile, reference", "project compile")} | {Bytes(benchCase, "project compile")} |");
            }
        }

        if (results.Keys.All(k => k.Name.StartsWith("project compile", StringComparison.Ordinal)))
        {
            return;
        }

        output.WriteLine();
        output.WriteLine("## TeachServe step benchmarks (one run)");
        output.WriteLine();
        output.WriteLine("Times are BenchmarkDotNet means; memory is bytes allocated per operation.");
        output.WriteLine();
        output.WriteLine("| case | per-answer | floor | floor, row by row | reference | per-answer / floor | reference / per-answer | compile | session memory | per-answer allocated |");
        output.WriteLine("|---|---|---|---|---|---|---|---|---|---|");
        foreach (var benchCase in results.Keys.Select(k => k.Case).Distinct().Order(StringComparer.Ordinal))
        {
            output.WriteLine(
                $"| {benchCase} | {Time(benchCase, "per-answer")} | {Time(benchCase, "floor")} | {Time(benchCase, "floor, row by row")} | {Time(benchCase, "reference")} | " +
                $"{Ratio(benchCase, "per-answer", "floor")} | {Ratio(benchCase, "reference", "per-answer")} | " +
                $"{Time(benchCase, "compile")} | {Bytes(benchCase, "session start")} | {Bytes(benchCase, "per-answer")} |");
        }
    }

    private static string FormatTime(double ns) => ns switch
    {
        >= 1e9 => (ns / 1e9).ToString("0.00", CultureInfo.InvariantCulture) + " s",
        >= 1e6 => (ns / 1e6).ToString("0.000", CultureInfo.InvariantCulture) + " ms",
        >= 1e3 => (ns / 1e3).ToString("0.0", CultureInfo.InvariantCulture) + " µs",
        _ => ns.ToString("0", CultureInfo.InvariantCulture) + " ns",
    };

    private static string FormatBytes(long bytes) => bytes switch
    {
        >= 1 << 20 => (bytes / (double)(1 << 20)).ToString("0.00", CultureInfo.InvariantCulture) + " MiB",
        >= 1 << 10 => (bytes / 1024.0).ToString("0.0", CultureInfo.InvariantCulture) + " KiB",
        _ => bytes.ToString(CultureInfo.InvariantCulture) + " B",
    };
}
