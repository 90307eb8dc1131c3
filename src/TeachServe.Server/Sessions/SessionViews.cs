using TeachServe.Core.Teaching;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Sessions;

/// <summary>What a session looks like from outside: its view, its phase's name, its evidence and an answer's result.</summary>
public static class SessionViews
{
    /// <summary>The session as the owner sees it, or (<paramref name="forAnnotator"/>) as its annotator may.</summary>
    public static SessionView Of(Session s, bool forAnnotator) => new()
    {
        SessionId = s.Id,
        WorkerRef = s.WorkerRef,
        Phase = s.Phase,
        Step = s.Step,
        ItemsTaught = s.TaughtCount,
        TestAnswered = s.TestAnswered,
        // The annotator sees the belief's figure only before any test answer could have moved it.
        PredictedError = forAnnotator && (s.Phase != Phases.Teaching || s.TestAnswered > 0) ? null : s.PredictedError,
        ModelVersion = s.ModelVersion,
        Policy = s.Policy,
        CreatedAt = s.CreatedAt,
        EndedAt = s.EndedAt,
        Evidence = forAnnotator || s.EvidenceJson is null ? null : Json.Deserialize<EvidenceView>(s.EvidenceJson),
        Purpose = s.Purpose,
    };

    public static string PhaseName(SessionPhase phase) => phase switch
    {
        SessionPhase.Teaching => Phases.Teaching,
        SessionPhase.Testing => Phases.Testing,
        SessionPhase.Released => Phases.Released,
        _ => Phases.Failed,
    };

    public static EvidenceView Evidence(CompiledVersion version, SessionRun run)
    {
        var e = run.Evidence();
        return new EvidenceView(
            PhaseName(e.Phase),
            e.TaughtItems.Count,
            e.TaughtItems.Select(i => version.Model.ItemIds[i]).ToList(),
            e.TestAnswered,
            e.TestErrors,
            Finite(e.TestErrorRate),
            double.IsFinite(e.TestErrorInterval.Low) && double.IsFinite(e.TestErrorInterval.High)
                ? new IntervalView(e.TestErrorInterval.Low, e.TestErrorInterval.High)
                : null,
            e.PredictedError,
            e.Confidence,
            e.RetakesUsed,
            version.Number,
            e.Policy,
            e.Attempts.Select(a => new AttemptView(a.Attempt + 1, a.Answered, a.Errors, a.CountedAnswered, a.CountedErrors, a.Passed)).ToList());
    }

    public static string EvidenceJson(EvidenceView evidence) => Json.Serialize(evidence);

    /// <summary>The response to an answer: after teaching the truth and its explanation, after a test answer only that it was recorded.</summary>
    public static AnswerResult Result(CompiledVersion version, SessionRun run, AnswerOutcome outcome, int item)
    {
        var phase = PhaseName(run.Phase);
        if (outcome.WasTeaching)
        {
            return new AnswerResult
            {
                Correct = outcome.Correct,
                Label = version.Model.Labels[outcome.TrueLabel],
                Explanation = version.Explanations[item],
                PredictedError = outcome.PredictedError,
                Phase = phase,
                Step = run.Step,
            };
        }
        // Test answers get no truth, no score and no belief figure, only that they were recorded.
        return new AnswerResult
        {
            Recorded = true,
            Retake = run.Phase == SessionPhase.Teaching ? true : null,
            Phase = phase,
            Step = run.Step,
        };
    }

    private static double? Finite(double x) => double.IsFinite(x) ? x : null;
}
