using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Experiments;
using TeachServe.Server.Events;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Experiments;

/// <summary>
/// Builds one <see cref="AnnotatorOutcome"/> per session of an experiment from the session rows and their
/// events: test answers and errors are counted from the answer events, and the learning curve is the predicted
/// error at start (the session.started event) followed by the one after each teaching answer.
/// </summary>
public static class ExperimentOutcomes
{
    public static async Task<List<AnnotatorOutcome>> LoadAsync(TeachServeDb db, Experiment experiment, CancellationToken ct)
    {
        var sessions = await db.Sessions.AsNoTracking()
            .Where(s => s.ProjectId == experiment.ProjectId && s.ExperimentId == experiment.Id)
            .OrderBy(s => s.Id).ToListAsync(ct);
        var ids = sessions.Select(s => s.Id).ToList();
        var events = await db.Events.AsNoTracking()
            .Where(e => e.ProjectId == experiment.ProjectId && e.SessionId != null && ids.Contains(e.SessionId)
                        && (e.Type == EventTypes.Answer || e.Type == EventTypes.SessionStarted))
            .OrderBy(e => e.Id)
            .Select(e => new { e.SessionId, e.Type, e.DataJson })
            .ToListAsync(ct);
        var bySession = events.GroupBy(e => e.SessionId!).ToDictionary(g => g.Key, g => g.ToList());

        var outcomes = new List<AnnotatorOutcome>(sessions.Count);
        foreach (var s in sessions)
        {
            int tested = 0, errors = 0;
            var curve = new List<double>();
            foreach (var e in bySession.GetValueOrDefault(s.Id) ?? [])
            {
                using var doc = JsonDocument.Parse(e.DataJson);
                var data = doc.RootElement;
                if (e.Type == EventTypes.SessionStarted)
                {
                    if (data.TryGetProperty("predictedError", out var start)) curve.Insert(0, start.GetDouble());
                    continue;
                }
                var phase = data.GetProperty("phase").GetString();
                if (phase == Phases.Testing)
                {
                    tested++;
                    if (!data.GetProperty("correct").GetBoolean()) errors++;
                }
                else if (data.GetProperty("response").TryGetProperty("predictedError", out var predicted))
                {
                    curve.Add(predicted.GetDouble());
                }
            }

            var released = s.Phase == Phases.Released;
            outcomes.Add(new AnnotatorOutcome(
                s.ArmIndex ?? 0, s.WorkerRef, s.CreatedAt, !s.IsActive, released, tested, errors, s.TaughtCount,
                released && s.EndedAt is { } ended ? ended - s.CreatedAt : null, s.PredictedError, curve));
        }
        return outcomes;
    }
}
