using TeachServe.Core.Projects;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Items;

/// <summary>
/// Reads an upload with the engine's <see cref="ItemReader"/> and checks each item with <see cref="ProjectValidator"/>
/// against the project's settings, listing every problem with its line and field. Nothing is stored when any
/// problem is found, so the owner fixes the file once and uploads it again. Whole-project rules (both pools
/// non-empty, family needs) are checked when a model version is compiled.
/// </summary>
public static class ItemParsing
{
    public const string Source = "request body";

    public sealed record Parsed(IReadOnlyList<ItemDefinition> Items, IReadOnlyList<FieldProblem> Problems);

    public static Parsed Read(ItemUploadFormat format, string body, ProjectSettings settings, int maxItems)
    {
        var limits = new ItemReaderLimits { MaxItems = maxItems, MaxStringLength = ItemLimits.SvgLength };
        using var reader = new StringReader(body);
        var read = format switch
        {
            ItemUploadFormat.JsonLines => ItemReader.ReadJsonLinesWithLines(reader, Source, limits),
            ItemUploadFormat.JsonArray => ItemReader.ReadJsonArrayWithLines(reader, Source, limits),
            _ => ItemReader.ReadCsvWithLines(reader, Source, limits),
        };
        var problems = read.Problems.Select(FromCore).ToList();
        if (read.Items.Count + problems.Count == 0)
            problems.Add(new FieldProblem("body", "contains no items"));

        problems.AddRange(Check(settings, read.Items, read.Lines));
        return new Parsed(read.Items, problems.OrderBy(p => p.Line ?? 0).ToList());
    }

    /// <summary>
    /// The per-item checks of an upload, for items already read (an upload's, or items another request carries inline):
    /// each problem names its item by <paramref name="lines"/> (parallel to the items) and its field. Whole-project
    /// rules are left to compiling.
    /// </summary>
    public static List<FieldProblem> Check(ProjectSettings settings, IReadOnlyList<ItemDefinition> items, IReadOnlyList<int> lines)
    {
        var sources = new ProjectSources("project", Source, lines);
        var problems = ProjectValidator.Validate(settings, items, sources)
            .Where(p => p.File == Source && p.Line is not null)
            .Select(FromCore).ToList();
        for (var i = 0; i < items.Count; i++)
            CheckSizes(items[i], lines[i], problems);
        return problems;
    }

    /// <summary>Bounds the engine does not impose but a shared server must.</summary>
    private static void CheckSizes(ItemDefinition item, int line, List<FieldProblem> problems)
    {
        void Require(bool ok, string field, string reason)
        {
            if (!ok) problems.Add(new FieldProblem(field, reason, line));
        }

        Require(item.Id.Length <= ItemLimits.IdLength && !item.Id.Any(char.IsControl),
            "id", $"must be at most {ItemLimits.IdLength} printable characters");
        Require(item.Explanation is null || item.Explanation.Length <= ItemLimits.ExplanationLength,
            "explanation", $"must be at most {ItemLimits.ExplanationLength} characters");
        Require(item.Content?.Text is null || item.Content.Text.Length <= ItemLimits.TextLength,
            "content.text", $"must be at most {ItemLimits.TextLength} characters");
        Require(item.Content?.Svg is null || item.Content.Svg.Length <= ItemLimits.SvgLength,
            "content.svg", $"must be at most {ItemLimits.SvgLength} characters");
        Require(item.Content?.ImageUrl is null || item.Content.ImageUrl.Length <= ProjectLimits.UrlLength,
            "content.imageUrl", $"must be at most {ProjectLimits.UrlLength} characters");
        Require(item.Features is null || item.Features.Count <= ItemLimits.MaxFeatures,
            "features", $"at most {ItemLimits.MaxFeatures} features");
        Require(item.Features is null || item.Features.Values.All(v => Math.Abs(v) <= 1e12),
            "features", "values must have magnitude at most 1e12");
        Require(item.Attributes is null || item.Attributes.Count <= ItemLimits.MaxAttributes,
            "attributes", $"at most {ItemLimits.MaxAttributes} attributes");
    }

    private static FieldProblem FromCore(ProjectProblem p) =>
        new(StripItemPrefix(p.Field) ?? "body", p.Message, p.Line);

    /// <summary>Problems already carry the line; "items[3].label" reads better as "label" beside it.</summary>
    private static string? StripItemPrefix(string? field)
    {
        if (field is null || !field.StartsWith("items[", StringComparison.Ordinal)) return field;
        var close = field.IndexOf(']', StringComparison.Ordinal);
        return close < 0 || close + 1 >= field.Length ? "item" : field[(close + 1)..].TrimStart('.');
    }
}
