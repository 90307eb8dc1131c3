using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Fitting;
using TeachServe.Server.Events;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Fits;

/// <summary>Reads finished sessions of a model version back from the event log as the fit sees them.</summary>
public static class FitSessions
{
    /// <summary>The sessions, or 422 when there are more than <paramref name="maxSessions"/>.</summary>
    public static async Task<Infrastructure.Outcome<List<RecordedSession>>> LoadAsync(TeachServeDb db, string projectId, int version, int maxSessions, CancellationToken ct)
    {
        var ids = await db.Sessions.AsNoTracking()
            // Refreshers start from a live belief, not the prior the fit's likelihood assumes.
            .Where(s => s.ProjectId == projectId && s.ModelVersion == version && !s.IsActive && s.Step > 0 && s.Purpose == Sessions.SessionPurposes.Onboarding)
            .OrderBy(s => s.Id).Select(s => s.Id).Take(maxSessions + 1).ToListAsync(ct);
        if (ids.Count > maxSessions)
            return Infrastructure.Problems.Unprocessable($"More than {maxSessions} finished sessions; the inline fit is limited to that many.");
        var events = await db.Events.AsNoTracking()
            .Where(e => e.ProjectId == projectId && e.SessionId != null && ids.Contains(e.SessionId)
                        && (e.Type == EventTypes.Answer || e.Type == EventTypes.SessionStarted))
            .OrderBy(e => e.Id).Select(e => new { e.SessionId, e.Type, e.Step, e.DataJson }).ToListAsync(ct);

        var sessions = new List<RecordedSession>(ids.Count);
        foreach (var group in events.GroupBy(e => e.SessionId!))
        {
            var steps = new List<RecordedStep>();
            double? startPredicted = null, lastTeachingPredicted = null;
            foreach (var e in group.OrderBy(e => e.Type == EventTypes.SessionStarted ? -1 : e.Step))
            {
                using var doc = JsonDocument.Parse(e.DataJson);
                var data = doc.RootElement;
                if (e.Type == EventTypes.SessionStarted)
                {
                    if (data.TryGetProperty("predictedError", out var p)) startPredicted = p.GetDouble();
                    continue;
                }
                var teaching = data.GetProperty("phase").GetString() == Phases.Teaching;
                steps.Add(new RecordedStep(data.GetProperty("item").GetInt32(), data.GetProperty("labelIndex").GetInt32(), teaching));
                if (teaching && data.GetProperty("response").TryGetProperty("predictedError", out var predicted))
                    lastTeachingPredicted = predicted.GetDouble();
            }
            if (steps.Count > 0)
                sessions.Add(new RecordedSession(steps) { PredictedError = lastTeachingPredicted ?? startPredicted });
        }
        return sessions;
    }
}
