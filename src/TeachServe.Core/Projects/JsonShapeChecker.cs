using System.Text.Json;
using System.Text.Json.Serialization.Metadata;

namespace TeachServe.Core.Projects;

/// <summary>
/// Walks a JSON document against the serializer's contract for a type and records every unknown, duplicate, missing,
/// null or mistyped member with its line. The serializer stops at the first such error; an owner fixing a file wants them all.
/// </summary>
internal sealed class JsonShapeChecker(byte[] utf8, string source, int firstLine, List<ProjectProblem> problems)
{
    private int[]? _lineStarts;
    private string _currentPath = "";

    /// <summary>Checks the value at the reader's current token; leaves the reader on the value's last token.</summary>
    /// <returns><see langword="true"/> if no problem was found in the value.</returns>
    public bool Check(ref Utf8JsonReader reader, Type type, string path)
    {
        var before = problems.Count;
        CheckValue(ref reader, ProjectJson.Options.GetTypeInfo(type), path);
        return problems.Count == before;
    }

    /// <summary>A syntax error from <see cref="Utf8JsonReader"/>, placed at its line and the member being read.</summary>
    public ProjectProblem SyntaxProblem(JsonException ex)
    {
        var line = ex.LineNumber is { } l ? firstLine + (int)l : (int?)null;
        return new ProjectProblem(source, line, ProjectJson.NullIfEmpty(_currentPath), "invalid JSON: " + ProjectJson.CleanMessage(ex.Message));
    }

    /// <summary>1-based line of a byte offset in the document.</summary>
    public int LineAt(long byteIndex)
    {
        _lineStarts ??= FindLineStarts(utf8);
        var i = Array.BinarySearch(_lineStarts, (int)byteIndex);
        return firstLine + (i >= 0 ? i : ~i - 1);
    }

    private void CheckValue(ref Utf8JsonReader reader, JsonTypeInfo info, string path)
    {
        _currentPath = path;
        switch (info.Kind)
        {
            case JsonTypeInfoKind.Object:
                CheckObject(ref reader, info, path);
                break;
            case JsonTypeInfoKind.Enumerable:
                CheckArray(ref reader, info, path);
                break;
            case JsonTypeInfoKind.Dictionary:
                CheckDictionary(ref reader, info, path);
                break;
            default:
                CheckScalar(ref reader, info.Type, path);
                break;
        }
    }

    private void CheckObject(ref Utf8JsonReader reader, JsonTypeInfo info, string path)
    {
        if (!Expect(ref reader, JsonTokenType.StartObject, "an object", path))
            return;
        var startLine = LineAt(reader.TokenStartIndex);
        var seen = new HashSet<string>(StringComparer.Ordinal);
        while (reader.Read() && reader.TokenType != JsonTokenType.EndObject)
        {
            var name = reader.GetString()!;
            var line = LineAt(reader.TokenStartIndex);
            var memberPath = FieldPath.Member(path, name);
            _currentPath = memberPath;
            reader.Read();
            if (!seen.Add(name))
            {
                Add(line, memberPath, $"'{name}' appears more than once");
                reader.Skip();
                continue;
            }
            var property = info.Properties.FirstOrDefault(p => p.Name == name);
            if (property is null)
            {
                Add(line, memberPath, UnknownMember(name, info));
                reader.Skip();
                continue;
            }
            if (reader.TokenType == JsonTokenType.Null)
            {
                if (!property.IsSetNullable)
                    Add(line, memberPath, $"'{name}' must not be null");
                continue;
            }
            CheckValue(ref reader, ProjectJson.Options.GetTypeInfo(property.PropertyType), memberPath);
        }
        foreach (var property in info.Properties)
        {
            if (property.IsRequired && !seen.Contains(property.Name))
                Add(startLine, FieldPath.Member(path, property.Name), $"'{property.Name}' is missing");
        }
    }

    private void CheckArray(ref Utf8JsonReader reader, JsonTypeInfo info, string path)
    {
        if (!Expect(ref reader, JsonTokenType.StartArray, "an array", path))
            return;
        var element = ProjectJson.Options.GetTypeInfo(info.ElementType!);
        var index = 0;
        while (reader.Read() && reader.TokenType != JsonTokenType.EndArray)
        {
            CheckElement(ref reader, element, FieldPath.Index(path, index));
            index++;
        }
    }

    private void CheckDictionary(ref Utf8JsonReader reader, JsonTypeInfo info, string path)
    {
        if (!Expect(ref reader, JsonTokenType.StartObject, "an object", path))
            return;
        var element = ProjectJson.Options.GetTypeInfo(info.ElementType!);
        var seen = new HashSet<string>(StringComparer.Ordinal);
        while (reader.Read() && reader.TokenType != JsonTokenType.EndObject)
        {
            var key = reader.GetString()!;
            var line = LineAt(reader.TokenStartIndex);
            var memberPath = FieldPath.Member(path, key);
            _currentPath = memberPath;
            reader.Read();
            if (!seen.Add(key))
            {
                Add(line, memberPath, $"'{key}' appears more than once");
                reader.Skip();
                continue;
            }
            CheckElement(ref reader, element, memberPath);
        }
    }

    private void CheckElement(ref Utf8JsonReader reader, JsonTypeInfo element, string path)
    {
        // Element nullability is not in the contract; reference-typed elements are left to the validator.
        if (reader.TokenType == JsonTokenType.Null && !element.Type.IsValueType)
            return;
        CheckValue(ref reader, element, path);
    }

    private void CheckScalar(ref Utf8JsonReader reader, Type type, string path)
    {
        var t = Nullable.GetUnderlyingType(type) ?? type;
        if (t == typeof(string))
        {
            Expect(ref reader, JsonTokenType.String, "a string", path);
        }
        else if (t == typeof(bool))
        {
            if (reader.TokenType is not (JsonTokenType.True or JsonTokenType.False))
                Mismatch(ref reader, "true or false", path);
        }
        else if (t == typeof(int))
        {
            if (Expect(ref reader, JsonTokenType.Number, "a whole number", path) && !reader.TryGetInt32(out _))
                Add(LineAt(reader.TokenStartIndex), path, "expected a whole number");
        }
        else if (t == typeof(double))
        {
            if (Expect(ref reader, JsonTokenType.Number, "a number", path) && !reader.TryGetDouble(out _))
                Add(LineAt(reader.TokenStartIndex), path, "the number is out of range");
        }
    }

    private bool Expect(ref Utf8JsonReader reader, JsonTokenType token, string what, string path)
    {
        if (reader.TokenType == token)
            return true;
        Mismatch(ref reader, what, path);
        return false;
    }

    private void Mismatch(ref Utf8JsonReader reader, string what, string path)
    {
        Add(LineAt(reader.TokenStartIndex), path, $"expected {what}, found {Describe(reader.TokenType)}");
        reader.Skip();
    }

    private void Add(int line, string path, string message) =>
        problems.Add(new ProjectProblem(source, line, ProjectJson.NullIfEmpty(path), message));

    private static string UnknownMember(string name, JsonTypeInfo info)
    {
        var names = info.Properties.Select(p => p.Name).ToList();
        var close = names.Where(n => EditDistance(n.ToUpperInvariant(), name.ToUpperInvariant()) <= 2)
            .OrderBy(n => EditDistance(n.ToUpperInvariant(), name.ToUpperInvariant()))
            .FirstOrDefault();
        return close is not null
            ? $"unknown member '{name}'; did you mean '{close}'?"
            : $"unknown member '{name}'; expected one of: {string.Join(", ", names)}";
    }

    private static string Describe(JsonTokenType token) => token switch
    {
        JsonTokenType.StartObject => "an object",
        JsonTokenType.StartArray => "an array",
        JsonTokenType.String => "a string",
        JsonTokenType.Number => "a number",
        JsonTokenType.True or JsonTokenType.False => "a boolean",
        JsonTokenType.Null => "null",
        _ => token.ToString(),
    };

    private static int EditDistance(string a, string b)
    {
        var previous = new int[b.Length + 1];
        var current = new int[b.Length + 1];
        for (var j = 0; j <= b.Length; j++)
            previous[j] = j;
        for (var i = 1; i <= a.Length; i++)
        {
            current[0] = i;
            for (var j = 1; j <= b.Length; j++)
            {
                var substitution = previous[j - 1] + (a[i - 1] == b[j - 1] ? 0 : 1);
                current[j] = Math.Min(substitution, Math.Min(previous[j], current[j - 1]) + 1);
            }
            (previous, current) = (current, previous);
        }
        return previous[b.Length];
    }

    private static int[] FindLineStarts(byte[] bytes)
    {
        var starts = new List<int> { 0 };
        for (var i = 0; i < bytes.Length; i++)
        {
            if (bytes[i] == (byte)'\n')
                starts.Add(i + 1);
        }
        return [.. starts];
    }
}
