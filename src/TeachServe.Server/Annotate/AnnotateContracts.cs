using TeachServe.Server.Sessions;

namespace TeachServe.Server.Annotate;

public sealed record LaunchRequest
{
    public required string Code { get; init; }
}

public sealed record LaunchExchanged(string SessionId, string Token);

/// <summary>
/// Everything the annotator page needs to draw the current step in one response: the session's place in its run,
/// the gate figures its progress indicator is honest about, the item (SVG already sanitised), and how the run ends.
/// </summary>
public sealed record AnnotatorPageState
{
    public required string SessionId { get; init; }
    public required string ProjectName { get; init; }
    public required IReadOnlyList<string> Labels { get; init; }
    public required string Phase { get; init; }
    public required int Step { get; init; }
    public required int ItemsTaught { get; init; }
    public required int TestAnswered { get; init; }
    /// <summary>Which check this is (1 for the first, 2 after one retake); 1 outside the testing phase.</summary>
    public int Attempt { get; init; } = 1;
    /// <summary>Items answered in the current check (0 outside the testing phase).</summary>
    public int AttemptAnswered { get; init; }
    /// <summary>Absent while testing (its movement would hint at the test answers).</summary>
    public double? PredictedError { get; init; }
    /// <summary>The predicted error before the first teaching item: where the progress bar starts.</summary>
    public double? StartingError { get; init; }
    public required double TargetError { get; init; }
    public required int MaxTeachingItems { get; init; }
    public required int MaxTestItems { get; init; }
    public PageItem? Item { get; init; }
    public EndView? End { get; init; }
    /// <summary>Whether the owner wrote instructions or label guidance (the page then fetches them once and shows them before teaching).</summary>
    public bool HasGuidance { get; init; }
    /// <summary><c>onboarding</c>, or <c>refresher</c>: a short session for an annotator already released.</summary>
    public string Purpose { get; init; } = Sessions.SessionPurposes.Onboarding;
    /// <summary>Parent origins the page may post its events to (the configured frame ancestors).</summary>
    public required IReadOnlyList<string> ParentOrigins { get; init; }
}

/// <summary>The owner's instructions and per-label guidance, rendered from Markdown to safe HTML (see <see cref="GuidanceMarkdown"/>).</summary>
public sealed record GuidanceView(string? InstructionsHtml, IReadOnlyList<LabelGuidance> Labels);

/// <summary>One label's guidance, in the project's label order.</summary>
public sealed record LabelGuidance(string Label, string Html);

/// <summary>The item to answer: text, an image URL, or the sanitised SVG as a data URI.</summary>
public sealed record PageItem(string Ref, string? Text, string? ImageUrl, string? SvgDataUri);

public sealed record EndView(string Phase, int ItemsTaught, int TestAnswered, string? Message, string? ContinueUrl, string? ContinueLabel);

public static class PageStates
{
    public static EndView? End(SessionView view, Core.Projects.CompletionSettings? completion)
    {
        if (view.Phase is not (Phases.Released or Phases.Failed)) return null;
        var released = view.Phase == Phases.Released;
        return new EndView(view.Phase, view.ItemsTaught, view.TestAnswered,
            released ? completion?.ReleasedMessage : completion?.FailedMessage,
            completion?.ContinueUrl, completion?.ContinueLabel);
    }
}
