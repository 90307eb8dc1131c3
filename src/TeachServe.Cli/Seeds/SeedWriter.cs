using System.Text;
using TeachServe.Core.Projects;

namespace TeachServe.Cli.Seeds;

internal static class SeedWriter
{
    public const string ReadmeFileName = "README.md";

    /// <summary>Generates, validates and, only if valid, writes the project folder and its README.</summary>
    /// <returns>The validation problems; empty when the folder was written.</returns>
    public static IReadOnlyList<ProjectProblem> Write(SeedProject seed, int seedValue, string directory, out ProjectDefinition project)
    {
        project = seed.Generate(seedValue);
        var problems = ProjectValidator.Validate(project.Settings, project.Items);
        if (problems.Count > 0)
            return problems;
        ProjectFolder.Save(project, directory);
        File.WriteAllText(Path.Combine(directory, ReadmeFileName), seed.Readme(seedValue).ReplaceLineEndings("\n"),
            new UTF8Encoding(encoderShouldEmitUTF8Identifier: false));
        return problems;
    }
}
