using System.Text.Json;
using System.Text.RegularExpressions;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// Client-facing wording of request-reading failures. The framework's own messages name parameter types and
/// .NET types ("... could not be converted to System.Int32", "parameter \"AnswerRequest request\""), which tells a
/// caller about the server's insides and nothing useful; these say what was wrong, where, in the API's terms.
/// </summary>
public static partial class ProblemText
{
    public static string Describe(BadHttpRequestException e)
    {
        if (e.InnerException is JsonException json) return Describe(json);
        var name = ParameterName().Match(e.Message) is { Success: true } m ? m.Groups["name"].Value : null;
        if (e.Message.StartsWith("Required parameter", StringComparison.Ordinal))
            return name is null ? "A required value is missing." : $"The required value '{name}' is missing.";
        if (e.Message.StartsWith("Failed to bind parameter", StringComparison.Ordinal))
            return name is null ? "A value in the address is not valid." : $"The value given for '{name}' is not valid.";
        if (e.Message.StartsWith("Implicit body inferred", StringComparison.Ordinal))
            return "This request needs a JSON body.";
        if (e.StatusCode == StatusCodes.Status415UnsupportedMediaType)
            return "The body's Content-Type is not one this request accepts (JSON requests need application/json).";
        if (e.Message.StartsWith("Failed to read parameter", StringComparison.Ordinal))
            return "The request body could not be read for this request.";
        return Scrub(e.Message) ?? "The request could not be read.";
    }

    public static string Describe(JsonException e)
    {
        var missing = MissingProperties().Match(e.Message);
        var what = missing.Success
            ? $"The body lacks required properties: {missing.Groups["names"].Value.TrimEnd('.')}"
            : "The body is not valid JSON for this request";
        return what + Where(e) + ".";
    }

    /// <summary>Removes namespace-qualified .NET type names from a message (a guard for wording we did not write).</summary>
    public static string? Scrub(string? text) =>
        text is null ? null : QualifiedTypeName().Replace(text, "a value");

    private static string Where(JsonException e)
    {
        var parts = new List<string>();
        if (!string.IsNullOrEmpty(e.Path) && e.Path != "$") parts.Add($"at {e.Path}");
        if (e.LineNumber is { } line) parts.Add($"line {line + 1}");
        if (e.BytePositionInLine is { } position) parts.Add($"byte {position + 1}");
        return parts.Count == 0 ? "" : " (" + string.Join(", ", parts) + ")";
    }

    [GeneratedRegex(@"parameter ""(?:[^""]*\s)?(?<name>[A-Za-z_][A-Za-z0-9_]*)""")]
    private static partial Regex ParameterName();

    [GeneratedRegex(@"missing required properties,? including the following: (?<names>[^.]+)")]
    private static partial Regex MissingProperties();

    [GeneratedRegex(@"\b(?:System|Microsoft|TeachServe)(?:\.[A-Za-z_][A-Za-z0-9_`]*)+(?:\[[^\]]*\])?")]
    private static partial Regex QualifiedTypeName();
}
