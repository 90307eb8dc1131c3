using System.Globalization;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>One model version as the onboarding page's filter lists it: its gate's target error and its prior's error.</summary>
public sealed record VersionChoice(int Number, double TargetError, double? StartingError);

/// <summary>A target line to draw: one target error and the versions whose gate used it.</summary>
public sealed record TargetLine(double TargetError, IReadOnlyList<int> Versions)
{
    /// <summary>"target error 0.1", or with the versions when the picture draws several lines.</summary>
    public string Label(bool withVersions) => withVersions
        ? $"target {TargetError.ToString("0.###", CultureInfo.InvariantCulture)} ({VersionList(Versions)})"
        : $"target error {TargetError.ToString("0.###", CultureInfo.InvariantCulture)}";

    /// <summary>"v2", "v1, v3", "v1–v4" for a run.</summary>
    public static string VersionList(IReadOnlyList<int> versions)
    {
        var sorted = versions.Order().ToList();
        if (sorted.Count > 2 && sorted[^1] - sorted[0] == sorted.Count - 1) return $"v{sorted[0]}–v{sorted[^1]}";
        return string.Join(", ", sorted.Select(v => $"v{v}"));
    }
}

/// <summary>
/// The onboarding page's <c>?version=N</c>: which model version the figures, pictures and session table are restricted
/// to (none: all versions), and each version's target error for the pictures' target lines (a version keeps the gate
/// it was compiled with, so targets can differ between versions).
/// </summary>
public sealed record VersionFilter(IReadOnlyList<VersionChoice> Choices, int? Selected, string? Unknown)
{
    public const string Parameter = "version";

    /// <summary>"?version=N" (or "") to add to the page's links and its pictures' addresses.</summary>
    public string Query(string separator = "?") => Selected is { } v ? $"{separator}{Parameter}={v.ToString(CultureInfo.InvariantCulture)}" : "";

    /// <summary>
    /// The target lines for pictures drawn from sessions of <paramref name="versionsInData"/>: the selected version's
    /// target, or one line per distinct target among the versions present; with none present (no sessions yet), the
    /// project's current target.
    /// </summary>
    public IReadOnlyList<TargetLine> Targets(IEnumerable<int> versionsInData, double projectTarget)
    {
        var present = Selected is { } v ? [v] : versionsInData.Distinct().ToList();
        var lines = Choices.Where(c => present.Contains(c.Number))
            .GroupBy(c => c.TargetError)
            .Select(g => new TargetLine(g.Key, g.Select(c => c.Number).ToList()))
            .OrderByDescending(l => l.TargetError).ToList();
        return lines.Count > 0 ? lines : [new TargetLine(projectTarget, [])];
    }

    /// <summary>The project's versions (ready or not: a session names the version it ran on) and the requested one.</summary>
    public static async Task<VersionFilter> ReadAsync(HttpContext http, TeachServeDb db, string projectId, CancellationToken ct)
    {
        var rows = await db.ModelVersions.AsNoTracking().Where(v => v.ProjectId == projectId)
            .OrderByDescending(v => v.Number)
            .Select(v => new { v.Number, v.SettingsJson, v.SummaryJson }).ToListAsync(ct);
        var choices = rows.Select(r => new VersionChoice(
            r.Number,
            Json.Deserialize<ProjectSettings>(r.SettingsJson).Gate.TargetError,
            r.SummaryJson is null ? null : Json.Deserialize<ModelSummary>(r.SummaryJson).PriorExpectedError)).ToList();
        var typed = http.Request.Query[Parameter].ToString();
        if (typed.Length == 0 || typed == "all") return new VersionFilter(choices, null, null);
        // An unreadable or unknown number shows all versions, and the page says so.
        return int.TryParse(typed, NumberStyles.None, CultureInfo.InvariantCulture, out var n) && choices.Any(c => c.Number == n)
            ? new VersionFilter(choices, n, null)
            : new VersionFilter(choices, null, typed.Length <= 20 ? typed : typed[..20] + "…");
    }
}
