namespace TeachServe.Core.Experiments;

/// <summary>What one annotator's session in an experiment has produced so far.</summary>
/// <param name="Arm">Index of the arm the annotator was assigned to.</param>
/// <param name="WorkerRef">The platform's reference of the worker.</param>
/// <param name="Started">When the session started.</param>
/// <param name="Finished">The session has ended (released or failed). A released annotator counts as finished either way.</param>
/// <param name="Released">The annotator passed the gate.</param>
/// <param name="TestAnswered">Held-out test items answered (all attempts), ≥ 0.</param>
/// <param name="TestErrors">Of those, answered wrongly, in [0, <paramref name="TestAnswered"/>].</param>
/// <param name="TeachingItems">Teaching items shown, ≥ 0.</param>
/// <param name="TimeToRelease">From start to release; <see langword="null"/> when not released (or not known).</param>
/// <param name="PredictedError">Predicted error (DESIGN 2.3) at the end of the session or now.</param>
/// <param name="LearningCurve">Optional: predicted error after 0, 1, 2, … teaching items (index = teaching step).</param>
public sealed record AnnotatorOutcome(
    int Arm,
    string WorkerRef,
    DateTimeOffset Started,
    bool Finished,
    bool Released,
    int TestAnswered,
    int TestErrors,
    int TeachingItems,
    TimeSpan? TimeToRelease,
    double PredictedError,
    IReadOnlyList<double>? LearningCurve = null)
{
    /// <summary>TestErrors / TestAnswered; NaN when no test item was answered.</summary>
    public double TestError => TestAnswered == 0 ? double.NaN : (double)TestErrors / TestAnswered;

    /// <summary>Finished, or released (which implies it).</summary>
    public bool HasEnded => Finished || Released;
}
