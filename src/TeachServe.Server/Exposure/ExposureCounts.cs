using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Teaching;
using TeachServe.Server.Events;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Exposure;

/// <summary>
/// The server's side of exposure control (<see cref="ExposureControl"/>): the counts, the administration
/// probabilities K a starting session gets, and how they are kept in its start event so a replay uses them again.
/// </summary>
public static class ExposureCounts
{
    /// <summary>Member of the session-start event's data holding K by item id (only items with K &lt; 1).</summary>
    public const string EventMember = "testAdministration";

    /// <summary>Sessions shown each test item (by id) and the number of tested sessions.</summary>
    public static async Task<(Dictionary<string, int> Shown, int Tested)> ReadAsync(TeachServeDb db, string projectId, CancellationToken ct)
    {
        var rows = await db.TestExposures.AsNoTracking().Where(e => e.ProjectId == projectId)
            .Select(e => new { e.ItemId, e.Sessions }).ToListAsync(ct);
        var shown = rows.Where(r => r.ItemId != TestExposure.TestedSessions).ToDictionary(r => r.ItemId, r => r.Sessions, StringComparer.Ordinal);
        var tested = rows.FirstOrDefault(r => r.ItemId == TestExposure.TestedSessions)?.Sessions ?? 0;
        return (shown, tested);
    }

    /// <summary>
    /// K per test item of the version (index = item − TeachCount), or null when the version's exposure target is off
    /// (1) or no item is over it: then the session draws exactly as without exposure control.
    /// </summary>
    public static async Task<double[]?> AdministrationAsync(TeachServeDb db, CompiledVersion version, CancellationToken ct)
    {
        var target = version.Settings.Gate.Test.MaxExposure;
        if (target >= 1) return null;
        var (shown, tested) = await ReadAsync(db, version.ProjectId, ct);
        var k = Administration(version, shown, tested, target);
        return k.All(p => p >= 1) ? null : k;
    }

    public static double[] Administration(CompiledVersion version, IReadOnlyDictionary<string, int> shown, int tested, double target)
    {
        var model = version.Model;
        var counts = new int[model.TestCount];
        for (var t = 0; t < counts.Length; t++) counts[t] = shown.GetValueOrDefault(model.ItemIds[model.TeachCount + t]);
        return ExposureControl.AdministrationProbabilities(counts, tested, target);
    }

    /// <summary>The K below 1 by item id, for the session-start event (doubles round-trip exactly through JSON).</summary>
    public static Dictionary<string, double>? ForEvent(CompiledVersion version, double[]? k)
    {
        if (k is null) return null;
        var model = version.Model;
        var stored = new Dictionary<string, double>(StringComparer.Ordinal);
        for (var t = 0; t < k.Length; t++)
        {
            if (k[t] < 1) stored[model.ItemIds[model.TeachCount + t]] = k[t];
        }
        return stored;
    }

    /// <summary>The K a session started with, read back from its start event; null if it started without.</summary>
    public static async Task<double[]?> OfSessionAsync(TeachServeDb db, CompiledVersion version, string sessionId, CancellationToken ct)
    {
        // Only a version with a target below 1 can have given its sessions K: no read for the others.
        if (version.Settings.Gate.Test.MaxExposure >= 1) return null;
        var data = await db.Events.AsNoTracking()
            .Where(e => e.SessionId == sessionId && e.Type == EventTypes.SessionStarted)
            .Select(e => e.DataJson).FirstOrDefaultAsync(ct);
        if (data is null) return null;
        using var json = JsonDocument.Parse(data);
        if (!json.RootElement.TryGetProperty(EventMember, out var stored) || stored.ValueKind != JsonValueKind.Object) return null;
        var model = version.Model;
        var index = new Dictionary<string, int>(StringComparer.Ordinal);
        for (var t = 0; t < model.TestCount; t++) index[model.ItemIds[model.TeachCount + t]] = t;
        var k = Enumerable.Repeat(1.0, model.TestCount).ToArray();
        foreach (var member in stored.EnumerateObject())
        {
            if (index.TryGetValue(member.Name, out var t)) k[t] = member.Value.GetDouble();
        }
        return k;
    }
}
