namespace TeachServe.Cli.Commands;

/// <summary>A small parser for <c>positional --flag --name value</c> command lines.</summary>
internal sealed class CliArguments
{
    private readonly HashSet<string> _flags = new(StringComparer.Ordinal);
    private readonly Dictionary<string, string> _values = new(StringComparer.Ordinal);

    public List<string> Positional { get; } = [];

    /// <summary>Null when an unknown option appears or a value is missing.</summary>
    public static CliArguments? Parse(IReadOnlyList<string> args, IReadOnlyCollection<string> flags, IReadOnlyCollection<string> values)
    {
        var parsed = new CliArguments();
        for (var i = 0; i < args.Count; i++)
        {
            var a = args[i];
            if (flags.Contains(a))
            {
                parsed._flags.Add(a);
            }
            else if (values.Contains(a))
            {
                if (i + 1 >= args.Count)
                {
                    return null;
                }

                parsed._values[a] = args[++i];
            }
            else if (a.StartsWith("--", StringComparison.Ordinal))
            {
                return null;
            }
            else
            {
                parsed.Positional.Add(a);
            }
        }

        return parsed;
    }

    public bool Has(string flag) => _flags.Contains(flag);

    public string? Value(string name) => _values.TryGetValue(name, out var v) ? v : null;
}

internal static class CliJson
{
    public static readonly System.Text.Json.JsonSerializerOptions Options = new(System.Text.Json.JsonSerializerDefaults.Web)
    {
        WriteIndented = false,
        NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals,
        Converters = { new System.Text.Json.Serialization.JsonStringEnumConverter(System.Text.Json.JsonNamingPolicy.KebabCaseLower) },
    };
}
