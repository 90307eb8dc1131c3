using System.Globalization;
using TeachServe.Cli.Seeds;
using TeachServe.Core.Projects;

namespace TeachServe.Cli.Commands;

/// <summary><c>teachserve seed list</c> and <c>teachserve seed generate NAME --out DIR [--seed N]</c>.</summary>
internal static class SeedCommand
{
    public const string Synopsis = "seed list | seed generate NAME --out DIR [--seed N]   write an invented demo project folder";

    private const string Help = """
        usage: teachserve seed list
               teachserve seed generate NAME --out DIR [--seed N]

        Writes the invented demo project NAME into DIR (project.json, items.jsonl, README.md).
        The same NAME and seed always give the same bytes; without --seed the project's default seed is used.
        """;

    public static int Run(string[] args, TextWriter output, TextWriter error)
    {
        return args switch
        {
            ["list"] => List(output),
            ["generate", .. var rest] => Generate(rest, output, error),
            [] => Usage.Fail(error, "seed: no subcommand given", Help),
            _ => Usage.Fail(error, $"seed: unknown subcommand '{args[0]}'", Help),
        };
    }

    private static int List(TextWriter output)
    {
        foreach (var seed in SeedCatalog.All)
            output.WriteLine($"{seed.Name,-15} seed {seed.DefaultSeed,-6} {seed.Summary}");
        return ExitCodes.Ok;
    }

    private static int Generate(string[] args, TextWriter output, TextWriter error)
    {
        if (!CommandArguments.TryParse(args, ["--out", "--seed"], [], out var parsed, out var message))
            return Usage.Fail(error, "seed generate: " + message, Help);
        if (parsed.Positionals.Count != 1)
            return Usage.Fail(error, "seed generate: give exactly one project NAME", Help);
        var name = parsed.Positionals[0];
        if (SeedCatalog.Find(name) is not { } seed)
            return Usage.Fail(error, $"seed generate: unknown seed project '{name}'; known: {string.Join(", ", SeedCatalog.All.Select(s => s.Name))}", Help);
        if (parsed.Option("--out") is not { Length: > 0 } directory)
            return Usage.Fail(error, "seed generate: --out DIR is required", Help);
        var seedValue = seed.DefaultSeed;
        if (parsed.Option("--seed") is { } seedText && !int.TryParse(seedText, NumberStyles.Integer, CultureInfo.InvariantCulture, out seedValue))
            return Usage.Fail(error, $"seed generate: --seed must be a whole number, not '{seedText}'", Help);

        var problems = SeedWriter.Write(seed, seedValue, directory, out var project);
        if (problems.Count > 0)
            return ProblemReport.Fail(error, problems);
        var teach = project.Items.Count(i => i.Pool == Pools.Teach);
        output.WriteLine($"wrote {seed.Name} (seed {seedValue}): {teach} teach and {project.Items.Count - teach} test items to {directory}");
        return ExitCodes.Ok;
    }
}
