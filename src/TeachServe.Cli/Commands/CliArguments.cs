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

    /// <summary>Reads <c>--learners</c> (1 to 1,000,000) into <paramref name="learners"/>, which keeps its default when absent.</summary>
    public bool TryLearners(TextWriter error, ref int learners)
    {
        if (Value("--learners") is not { } text) return true;
        if (int.TryParse(text, System.Globalization.CultureInfo.InvariantCulture, out var parsed) && parsed is >= 1 and <= 1_000_000)
        {
            learners = parsed;
            return true;
        }
        error.WriteLine("--learners must be an integer between 1 and 1000000");
        return false;
    }

    /// <summary>Reads <c>--seed</c> (a non-negative integer) into <paramref name="seed"/>, which keeps its default when absent.</summary>
    public bool TrySeed(TextWriter error, ref ulong seed)
    {
        if (Value("--seed") is not { } text) return true;
        if (ulong.TryParse(text, System.Globalization.CultureInfo.InvariantCulture, out var parsed))
        {
            seed = parsed;
            return true;
        }
        error.WriteLine("--seed must be a non-negative integer");
        return false;
    }
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
