using TeachServe.Core.Projects;

namespace TeachServe.Cli.Commands;

internal static class ProblemReport
{
    /// <summary>Prints every problem, one a line, and returns the validation-error exit code.</summary>
    public static int Fail(TextWriter error, IReadOnlyList<ProjectProblem> problems)
    {
        error.WriteLine($"teachserve: {problems.Count} {(problems.Count == 1 ? "problem" : "problems")}:");
        foreach (var problem in problems)
            error.WriteLine("  " + problem);
        return ExitCodes.Invalid;
    }
}
