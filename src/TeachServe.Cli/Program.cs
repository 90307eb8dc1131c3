using TeachServe.Cli.Commands;

namespace TeachServe.Cli;

internal static class Program
{
    public static int Main(string[] args) => Run(args, Console.Out, Console.Error);

    /// <summary>
    /// One arm per verb. A verb lives in Commands/, parses its own arguments and returns an <see cref="ExitCodes"/> value;
    /// adding one is an arm here and a line in <see cref="Usage"/>.
    /// </summary>
    internal static int Run(string[] args, TextWriter output, TextWriter error) => args switch
    {
        ["seed", .. var rest] => SeedCommand.Run(rest, output, error),
        ["compile", .. var rest] => OnProject(() => CompileCommand.Run(rest, output, error), error),
        ["simulate", .. var rest] => OnProject(() => SimulateCommand.Run(rest, output, error), error),
        ["gate", .. var rest] => OnProject(() => GateCommand.Run(rest, output, error), error),
        ["robustness", .. var rest] => OnProject(() => RobustnessCommand.Run(rest, output, error), error),
        ["live-quality", .. var rest] => OnProject(() => LiveQualityCommand.Run(rest, output, error), error),
        ["help" or "--help" or "-h", ..] => Usage.Show(output),
        [] => Usage.Fail(error, "no verb given"),
        [var verb, ..] => Usage.Fail(error, $"unknown verb '{verb}'"),
    };

    /// <summary>Runs a verb that loads a project folder, turning validation failures into the problem list.</summary>
    private static int OnProject(Func<int> verb, TextWriter error)
    {
        try
        {
            return verb();
        }
        catch (TeachServe.Core.Projects.ProjectValidationException ex)
        {
            return ProblemReport.Fail(error, ex.Problems);
        }
    }
}
