namespace TeachServe.Cli.Commands;

/// <summary>
/// A verb's arguments split into positionals, <c>--name value</c> (or <c>--name=value</c>) options and bare <c>--flag</c>s.
/// Each verb declares the options it knows, so a misspelt option is a usage error rather than ignored.
/// </summary>
internal sealed class CommandArguments
{
    private readonly Dictionary<string, string> _options = new(StringComparer.Ordinal);
    private readonly HashSet<string> _flags = new(StringComparer.Ordinal);

    private CommandArguments() { }

    public List<string> Positionals { get; } = [];

    public string? Option(string name) => _options.GetValueOrDefault(name);

    public bool Flag(string name) => _flags.Contains(name);

    public static bool TryParse(IReadOnlyList<string> args, IReadOnlyCollection<string> valueOptions, IReadOnlyCollection<string> flags,
        out CommandArguments parsed, out string error)
    {
        parsed = new CommandArguments();
        error = "";
        for (var i = 0; i < args.Count; i++)
        {
            var arg = args[i];
            if (!arg.StartsWith("--", StringComparison.Ordinal))
            {
                parsed.Positionals.Add(arg);
                continue;
            }
            var equals = arg.IndexOf('=', StringComparison.Ordinal);
            var name = equals < 0 ? arg : arg[..equals];
            if (flags.Contains(name) && equals < 0)
            {
                parsed._flags.Add(name);
                continue;
            }
            if (!valueOptions.Contains(name))
            {
                error = $"unknown option '{name}'";
                return false;
            }
            string value;
            if (equals >= 0)
                value = arg[(equals + 1)..];
            else if (i + 1 < args.Count)
                value = args[++i];
            else
            {
                error = $"option '{name}' needs a value";
                return false;
            }
            if (!parsed._options.TryAdd(name, value))
            {
                error = $"option '{name}' is given more than once";
                return false;
            }
        }
        return true;
    }
}
