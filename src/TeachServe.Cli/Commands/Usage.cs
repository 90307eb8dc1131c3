namespace TeachServe.Cli.Commands;

/// <summary>The tool's top-level help: one line per verb.</summary>
internal static class Usage
{
    private static readonly string[] Verbs =
    [
        SeedCommand.Synopsis,
        CompileCommand.Usage,
        SimulateCommand.Usage,
        GateCommand.Usage,
        RobustnessCommand.Usage,
        LiveQualityCommand.Usage,
    ];

    public static int Show(TextWriter output)
    {
        output.WriteLine("usage: teachserve <verb> [arguments]");
        output.WriteLine();
        foreach (var line in Verbs)
            output.WriteLine("  " + line);
        return ExitCodes.Ok;
    }

    /// <summary>Prints what was wrong and the usage, and returns the usage-error exit code.</summary>
    public static int Fail(TextWriter error, string message, string? commandUsage = null)
    {
        error.WriteLine($"teachserve: {message}");
        error.WriteLine();
        if (commandUsage is null)
            Show(error);
        else
            error.WriteLine(commandUsage);
        return ExitCodes.Usage;
    }
}
