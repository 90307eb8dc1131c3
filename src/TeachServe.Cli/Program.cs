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
        ["help" or "--help" or "-h", ..] => Usage.Show(output),
        [] => Usage.Fail(error, "no verb given"),
        [var verb, ..] => Usage.Fail(error, $"unknown verb '{verb}'"),
    };
}
