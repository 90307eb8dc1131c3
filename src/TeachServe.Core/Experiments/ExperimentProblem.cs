namespace TeachServe.Core.Experiments;

/// <summary>One thing wrong with an experiment definition.</summary>
/// <param name="Field">JSON-path-like location, e.g. <c>arms[1].gate.test.delta</c> or <c>weights[0]</c>.</param>
/// <param name="Message">What is wrong, for a person to read.</param>
public sealed record ExperimentProblem(string Field, string Message)
{
    public override string ToString() => $"{Field}: {Message}";
}
