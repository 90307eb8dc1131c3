using TeachServe.Core.Projects;

namespace TeachServe.Cli.Seeds;

/// <summary>An invented demo project: a pure function from a seed to its definition, and the README that goes with it.</summary>
internal sealed record SeedProject(
    string Name,
    int DefaultSeed,
    string Summary,
    Func<int, ProjectDefinition> Generate,
    Func<int, string> Readme);
