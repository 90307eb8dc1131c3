namespace TeachServe.Cli.Commands;

internal static class ExitCodes
{
    public const int Ok = 0;
    /// <summary>The input was read but is not a valid project; every problem has been printed.</summary>
    public const int Invalid = 1;
    /// <summary>The command line itself was wrong; usage has been printed.</summary>
    public const int Usage = 2;
}
