namespace TeachServe.Core.Projects;

/// <summary>A project could not be loaded; <see cref="Problems"/> lists everything that is wrong, not only the first thing.</summary>
public sealed class ProjectValidationException : Exception
{
    public ProjectValidationException(IReadOnlyList<ProjectProblem> problems)
        : base(Describe(problems)) => Problems = problems;

    public ProjectValidationException() : this([]) { }

    public ProjectValidationException(string message) : base(message) => Problems = [];

    public ProjectValidationException(string message, Exception innerException)
        : base(message, innerException) => Problems = [];

    public IReadOnlyList<ProjectProblem> Problems { get; }

    private static string Describe(IReadOnlyList<ProjectProblem> problems)
    {
        ArgumentNullException.ThrowIfNull(problems);
        if (problems.Count == 0)
            return "The project is invalid.";
        var noun = problems.Count == 1 ? "problem" : "problems";
        return $"The project has {problems.Count} {noun}:" + string.Concat(problems.Select(p => "\n  " + p));
    }
}
