namespace TeachServe.Core.Projects;

/// <summary>
/// One thing wrong with a project's files or settings.
/// </summary>
/// <param name="File">The file or source the problem is in (<c>project.json</c>, <c>items.jsonl</c>, <c>request body</c>).</param>
/// <param name="Line">1-based line in that source, when known.</param>
/// <param name="Field">JSON-path-like location, e.g. <c>items[12].features.width</c> or <c>gate.targetError</c>.</param>
/// <param name="Message">What is wrong, for a person to read.</param>
public sealed record ProjectProblem(string File, int? Line, string? Field, string Message)
{
    public override string ToString()
    {
        var where = Line is { } line ? $"{File}:{line}" : File;
        return Field is null ? $"{where}: {Message}" : $"{where}: {Field}: {Message}";
    }
}
