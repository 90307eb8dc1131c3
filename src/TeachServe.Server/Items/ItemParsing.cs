using System.Text;
using System.Text.Json;
using TeachServe.Core.Projects;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Items;

/// <summary>
/// Reads an upload into items and lists every problem with its line and field. Nothing is stored when
/// any problem is found, so the owner fixes the file once and uploads it again.
/// </summary>
public static class ItemParsing
{
    public sealed record Parsed(IReadOnlyList<ItemDefinition> Items, IReadOnlyList<FieldProblem> Problems);

    public static Parsed Read(ItemUploadFormat format, string body, ProjectSettings settings, int maxItems)
    {
        var problems = new List<FieldProblem>();
        var items = new List<(ItemDefinition Item, int Line)>();
        switch (format)
        {
            case ItemUploadFormat.JsonLines:
                ReadJsonLines(body, items, problems);
                break;
            case ItemUploadFormat.JsonArray:
                ReadJsonArray(body, items, problems);
                break;
            default:
                throw new ApiProblemException(StatusCodes.Status415UnsupportedMediaType, "Unsupported media type",
                    "CSV uploads are not available yet; send JSON Lines (application/x-ndjson) or a JSON array.");
        }

        if (items.Count + problems.Count == 0)
            problems.Add(new FieldProblem("body", "contains no items"));
        if (items.Count > maxItems)
            throw ApiProblemException.Unprocessable($"An upload may hold at most {maxItems} items; this one has {items.Count}.")
                .With("limit", maxItems);

        var seen = new Dictionary<string, int>(StringComparer.Ordinal);
        foreach (var (item, line) in items)
        {
            Check(item, line, settings, problems);
            if (!seen.TryAdd(item.Id, line))
                problems.Add(new FieldProblem("id", $"'{Clip(item.Id)}' already appears on line {seen[item.Id]}", line));
        }
        return new Parsed(items.Select(i => i.Item).ToList(), problems);
    }

    private static void ReadJsonLines(string body, List<(ItemDefinition, int)> items, List<FieldProblem> problems)
    {
        using var reader = new StringReader(body);
        var lineNumber = 0;
        while (reader.ReadLine() is { } line)
        {
            lineNumber++;
            if (string.IsNullOrWhiteSpace(line)) continue;
            try
            {
                items.Add((JsonSerializer.Deserialize<ItemDefinition>(line, Json.Options)
                    ?? throw new JsonException("an item must be an object, not null"), lineNumber));
            }
            catch (JsonException e)
            {
                problems.Add(new FieldProblem(e.Path is { Length: > 1 } path ? path.TrimStart('$', '.') : "line", Reason(e), lineNumber));
            }
        }
    }

    private static void ReadJsonArray(string body, List<(ItemDefinition, int)> items, List<FieldProblem> problems)
    {
        var bytes = Encoding.UTF8.GetBytes(body);
        var reader = new Utf8JsonReader(bytes, new JsonReaderOptions { MaxDepth = 32 });
        try
        {
            if (!reader.Read() || reader.TokenType != JsonTokenType.StartArray)
            {
                problems.Add(new FieldProblem("body", "must be a JSON array of items", 1));
                return;
            }
            while (reader.Read() && reader.TokenType != JsonTokenType.EndArray)
            {
                var line = LineOf(bytes, (int)reader.TokenStartIndex);
                using var element = JsonDocument.ParseValue(ref reader);
                try
                {
                    items.Add((element.RootElement.Deserialize<ItemDefinition>(Json.Options)
                        ?? throw new JsonException("an item must be an object, not null"), line));
                }
                catch (JsonException e)
                {
                    problems.Add(new FieldProblem($"[{items.Count + problems.Count}]", Reason(e), line));
                }
            }
        }
        catch (JsonException e)
        {
            problems.Add(new FieldProblem("body", $"is not valid JSON: {e.Message}", (int)(e.LineNumber ?? 0) + 1));
        }
    }

    private static void Check(ItemDefinition item, int line, ProjectSettings settings, List<FieldProblem> problems)
    {
        void Require(bool ok, string field, string reason)
        {
            if (!ok) problems.Add(new FieldProblem(field, reason, line));
        }

        Require(item.Id.Length is > 0 and <= ItemLimits.IdLength && !item.Id.Any(char.IsControl),
            "id", $"must be 1 to {ItemLimits.IdLength} printable characters");
        Require(item.Pool is Pools.Teach or Pools.Test, "pool", "must be 'teach' or 'test'");
        Require(settings.Labels.Contains(item.Label), "label", $"'{Clip(item.Label)}' is not one of the project's labels ({string.Join(", ", settings.Labels)})");
        Require(item.Explanation is null || item.Explanation.Length <= ItemLimits.ExplanationLength,
            "explanation", $"must be at most {ItemLimits.ExplanationLength} characters");
        if (item.Content is { } c)
        {
            Require(c.Text is null || c.Text.Length <= ItemLimits.TextLength, "content.text", $"must be at most {ItemLimits.TextLength} characters");
            Require(c.ImageUrl is null || (c.ImageUrl.Length <= ProjectLimits.UrlLength && Uri.TryCreate(c.ImageUrl, UriKind.RelativeOrAbsolute, out _)),
                "content.imageUrl", "must be a URL of at most 2000 characters");
            Require(c.Svg is null || c.Svg.Length <= ItemLimits.SvgLength, "content.svg", $"must be at most {ItemLimits.SvgLength} characters");
        }
        if (item.Features is { } features)
        {
            Require(features.Count <= ItemLimits.MaxFeatures, "features", $"at most {ItemLimits.MaxFeatures} features");
            foreach (var (name, value) in features)
            {
                Require(name.Length is > 0 and <= ItemLimits.NameLength, "features", $"feature names must be 1 to {ItemLimits.NameLength} characters");
                Require(double.IsFinite(value) && Math.Abs(value) <= 1e12, $"features.{Clip(name)}", "must be a finite number of magnitude at most 1e12");
            }
        }
        if (item.Attributes is { } attributes)
        {
            Require(attributes.Count <= ItemLimits.MaxAttributes, "attributes", $"at most {ItemLimits.MaxAttributes} attributes");
            Require(attributes.All(a => a.Length is > 0 and <= ItemLimits.NameLength), "attributes",
                $"attribute names must be 1 to {ItemLimits.NameLength} characters");
        }
    }

    private static string Reason(JsonException e) =>
        e.Message.Split(" Path:", 2)[0].Split(" LineNumber:", 2)[0];

    private static int LineOf(byte[] bytes, int offset) =>
        1 + bytes.AsSpan(0, offset).Count((byte)'\n');

    private static string Clip(string s) => s.Length <= 40 ? s : s[..40] + "…";
}
