using System.Text;
using System.Text.Encodings.Web;
using System.Text.Json;
using System.Text.Json.Serialization;
using System.Text.Json.Serialization.Metadata;

namespace TeachServe.Core.Projects;

/// <summary>How projects are written as JSON: <c>project.json</c>, the lines of <c>items.jsonl</c>, and the same shapes over HTTP.</summary>
public static class ProjectJson
{
    /// <summary>
    /// camelCase, enums as strings, unknown members, duplicate members and nulls in non-nullable members rejected
    /// (a typo such as <c>targetEror</c> must not silently fall back to a default), nulls not written.
    /// </summary>
    public static JsonSerializerOptions Options { get; } = Create(writeIndented: false, JavaScriptEncoder.Default);

    // Files are read by people and never embedded in HTML, so SVG markup stays legible instead of becoming \u003C.
    private static readonly JsonSerializerOptions FileLine = Create(writeIndented: false, JavaScriptEncoder.UnsafeRelaxedJsonEscaping);
    private static readonly JsonSerializerOptions FileIndented = Create(writeIndented: true, JavaScriptEncoder.UnsafeRelaxedJsonEscaping);

    /// <summary>The text of a <c>project.json</c>: two-space indentation, LF line ends, a final newline.</summary>
    public static string SerializeSettings(ProjectSettings settings) =>
        JsonSerializer.Serialize(settings, FileIndented) + "\n";

    /// <summary>One line of <c>items.jsonl</c>, without the line end.</summary>
    public static string SerializeItem(ItemDefinition item) => JsonSerializer.Serialize(item, FileLine);

    /// <summary>Writes one item per line, each line ending in LF.</summary>
    public static void WriteJsonLines(TextWriter writer, IEnumerable<ItemDefinition> items)
    {
        ArgumentNullException.ThrowIfNull(writer);
        ArgumentNullException.ThrowIfNull(items);
        foreach (var item in items)
        {
            writer.Write(SerializeItem(item));
            writer.Write('\n');
        }
    }

    /// <summary>
    /// Reads project settings, collecting every unknown, duplicate, missing or mistyped member with its line instead of
    /// stopping at the first. Settings are returned only when there are no problems; ranges are checked by <see cref="ProjectValidator"/>.
    /// </summary>
    public static (ProjectSettings? settings, IReadOnlyList<ProjectProblem> problems) ReadSettings(string json, string source)
    {
        ArgumentNullException.ThrowIfNull(json);
        var problems = new List<ProjectProblem>();
        var settings = ReadDocument<ProjectSettings>(Encoding.UTF8.GetBytes(json), source, firstLine: 1, rootPath: "", problems);
        return (settings, problems);
    }

    /// <summary>Checks one JSON document against the shape of <typeparamref name="T"/>, then deserializes it if the check found nothing.</summary>
    internal static T? ReadDocument<T>(byte[] utf8, string source, int firstLine, string rootPath, List<ProjectProblem> problems)
        where T : class
    {
        var checker = new JsonShapeChecker(utf8, source, firstLine, problems);
        var reader = new Utf8JsonReader(utf8);
        var before = problems.Count;
        try
        {
            if (!reader.Read())
            {
                problems.Add(new ProjectProblem(source, firstLine, NullIfEmpty(rootPath), "there is no JSON value"));
                return null;
            }
            checker.Check(ref reader, typeof(T), rootPath);
            reader.Read(); // throws if anything but whitespace follows the value
        }
        catch (JsonException ex)
        {
            problems.Add(checker.SyntaxProblem(ex));
            return null;
        }
        return problems.Count == before ? Deserialize<T>(utf8, source, firstLine, rootPath, problems) : null;
    }

    internal static T? Deserialize<T>(byte[] utf8, string source, int firstLine, string rootPath, List<ProjectProblem> problems)
        where T : class
    {
        try
        {
            return JsonSerializer.Deserialize<T>(utf8, Options);
        }
        catch (JsonException ex)
        {
            // The shape check should have caught this; the serializer stays the final word and is reported as such.
            var line = ex.LineNumber is { } l ? firstLine + (int)l : (int?)null;
            problems.Add(new ProjectProblem(source, line, NullIfEmpty(JoinPath(rootPath, ex.Path)), CleanMessage(ex.Message)));
            return null;
        }
    }

    /// <summary>Removes the "Path: … | LineNumber: …" tail that System.Text.Json appends; the problem carries both.</summary>
    internal static string CleanMessage(string message)
    {
        foreach (var marker in (ReadOnlySpan<string>)[" Path: ", " LineNumber: "])
        {
            var at = message.IndexOf(marker, StringComparison.Ordinal);
            if (at >= 0)
                message = message[..at];
        }
        return message.TrimEnd();
    }

    private static string JoinPath(string rootPath, string? jsonPath)
    {
        var rest = (jsonPath ?? "$").TrimStart('$');
        if (rest.StartsWith('.'))
            rest = rest[1..];
        if (rest.Length == 0)
            return rootPath;
        if (rootPath.Length == 0)
            return rest;
        return rest.StartsWith('[') ? rootPath + rest : rootPath + "." + rest;
    }

    internal static string? NullIfEmpty(string path) => path.Length == 0 ? null : path;

    private static JsonSerializerOptions Create(bool writeIndented, JavaScriptEncoder encoder)
    {
        var options = new JsonSerializerOptions
        {
            PropertyNamingPolicy = JsonNamingPolicy.CamelCase,
            UnmappedMemberHandling = JsonUnmappedMemberHandling.Disallow,
            AllowDuplicateProperties = false,
            RespectNullableAnnotations = true,
            RespectRequiredConstructorParameters = true,
            DefaultIgnoreCondition = JsonIgnoreCondition.WhenWritingNull,
            Encoder = encoder,
            WriteIndented = writeIndented,
            IndentSize = 2,
            NewLine = "\n",
            TypeInfoResolver = new DefaultJsonTypeInfoResolver(),
        };
        options.Converters.Add(new JsonStringEnumConverter(JsonNamingPolicy.CamelCase, allowIntegerValues: false));
        options.MakeReadOnly();
        return options;
    }
}
