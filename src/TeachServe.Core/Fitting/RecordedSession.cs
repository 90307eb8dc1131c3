namespace TeachServe.Core.Fitting;

/// <summary>One recorded answer of a session.</summary>
/// <param name="Item">Index into the model version's items (teach pool first, then test pool).</param>
/// <param name="Label">The label the annotator gave.</param>
/// <param name="Teaching">
/// True for a teaching step (the true label was shown afterwards, so the learner may switch); false for a test
/// step (no feedback: the answer is observed, the learner's hypothesis does not change).
/// </param>
public readonly record struct RecordedStep(int Item, int Label, bool Teaching);

/// <summary>
/// A finished session as the fit sees it: its answers in the order given, on the model version the session
/// pinned. Teaching items were chosen by a policy from earlier answers only, never from the learner parameters,
/// so the likelihood of the answers given the items is the likelihood of the whole record (the design is ignorable).
/// </summary>
/// <param name="Steps">Every answer in order, teaching and test, all attempts.</param>
public sealed record RecordedSession(IReadOnlyList<RecordedStep> Steps)
{
    /// <summary>
    /// The predicted error Ê when the last teaching phase ended, i.e. before the final test attempt's answers were
    /// observed; null when not recorded. Calibration compares it with that attempt's test answers, which it did
    /// not see, so the comparison is out of sample.
    /// </summary>
    public double? PredictedError { get; init; }
}
