using TeachServe.Cli;
using TeachServe.Core.Tests.Engine;

namespace TeachServe.Core.Tests.Cli;

/// <summary>Runs the `teachserve` tool in process, capturing what it prints.</summary>
internal static class CliRun
{
    public static (int Code, string Output, string Error) Run(params string[] args)
    {
        using var output = new StringWriter();
        using var error = new StringWriter();
        var code = Program.Run(args, output, error);
        return (code, output.ToString(), error.ToString());
    }

    /// <summary>The folder of a committed seed project.</summary>
    public static string Seed(string name) => Path.Combine(SeedModels.RepositoryRoot(), "seed-projects", name);
}
