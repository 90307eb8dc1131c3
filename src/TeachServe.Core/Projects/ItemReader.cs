using System.Globalization;
using System.Text;
using System.Text.Json;

namespace TeachServe.Core.Projects;

/// <summary>
/// Reads items from JSON Lines, a JSON array, or CSV. Every bad record is reported with its line and field and reading
/// goes on, so one pass lists all problems. Only items without problems are returned.
/// </summary>
public static class ItemReader
{
    /// <summary>Fixed CSV columns; names are matched ignoring case.</summary>
    public static readonly IReadOnlyList<string> CsvColumns = ["id", "pool", "label", "explanation", "text", "imageUrl", "svg", "attributes"];

    /// <summary>CSV column prefix for a numeric feature, e.g. <c>f:width</c>.</summary>
    public const string CsvFeaturePrefix = "f:";

    /// <summary>CSV column prefix for a 0/1 attribute, e.g. <c>a:repeat_contact</c>.</summary>
    public const string CsvAttributePrefix = "a:";

    /// <summary>One <see cref="ItemDefinition"/> per non-blank line.</summary>
    /// <param name="source">Named in every problem: a file name or <c>request body</c>.</param>
    public static (IReadOnlyList<ItemDefinition> items, IReadOnlyList<ProjectProblem> problems) ReadJsonLines(
        TextReader reader, string source, ItemReaderLimits? limits = null) =>
        ReadJsonLinesWithLines(reader, source, limits).ToTuple();

    /// <summary>A single JSON array of <see cref="ItemDefinition"/> objects.</summary>
    public static (IReadOnlyList<ItemDefinition> items, IReadOnlyList<ProjectProblem> problems) ReadJsonArray(
        TextReader reader, string source, ItemReaderLimits? limits = null) =>
        ReadJsonArrayWithLines(reader, source, limits).ToTuple();

    /// <summary>
    /// CSV with a header row: <c>id,pool,label</c> (required), <c>explanation,text,imageUrl,svg</c>, <c>f:&lt;name&gt;</c> numeric
    /// feature columns (empty cell = feature absent), <c>a:&lt;name&gt;</c> 0/1 attribute columns and/or an <c>attributes</c>
    /// column of <c>;</c>-separated cue names.
    /// </summary>
    public static (IReadOnlyList<ItemDefinition> items, IReadOnlyList<ProjectProblem> problems) ReadCsv(
        TextReader reader, string source, ItemReaderLimits? limits = null) =>
        ReadCsvWithLines(reader, source, limits).ToTuple();

    internal static ItemReadResult ReadJsonLinesWithLines(TextReader reader, string source, ItemReaderLimits? limits)
    {
        ArgumentNullException.ThrowIfNull(reader);
        var collector = new Collector(source, limits ?? ItemReaderLimits.Default);
        var lineNumber = 0;
        while (reader.ReadLine() is { } line)
        {
            lineNumber++;
            if (lineNumber == 1)
                line = line.TrimStart('\uFEFF');
            if (string.IsNullOrWhiteSpace(line))
                continue;
            if (!collector.TryBegin(lineNumber, out var index))
                break;
            var item = ProjectJson.ReadDocument<ItemDefinition>(
                Encoding.UTF8.GetBytes(line), source, lineNumber, FieldPath.Item(index), collector.Problems);
            if (item is not null)
                collector.Accept(item, index, lineNumber);
        }
        return collector.Result();
    }

    internal static ItemReadResult ReadJsonArrayWithLines(TextReader reader, string source, ItemReaderLimits? limits)
    {
        ArgumentNullException.ThrowIfNull(reader);
        var collector = new Collector(source, limits ?? ItemReaderLimits.Default);
        var utf8 = Encoding.UTF8.GetBytes(reader.ReadToEnd().TrimStart('\uFEFF'));
        var checker = new JsonShapeChecker(utf8, source, firstLine: 1, collector.Problems);
        var json = new Utf8JsonReader(utf8);
        try
        {
            if (!json.Read())
            {
                collector.Problems.Add(new ProjectProblem(source, 1, null, "there is no JSON value"));
                return collector.Result();
            }
            if (json.TokenType != JsonTokenType.StartArray)
            {
                collector.Problems.Add(new ProjectProblem(source, checker.LineAt(json.TokenStartIndex), null, "expected a JSON array of items"));
                return collector.Result();
            }
            while (json.Read() && json.TokenType != JsonTokenType.EndArray)
            {
                var start = (int)json.TokenStartIndex;
                var line = checker.LineAt(start);
                if (!collector.TryBegin(line, out var index))
                    return collector.Result();
                if (!checker.Check(ref json, typeof(ItemDefinition), FieldPath.Item(index)))
                    continue;
                var element = utf8[start..(int)json.BytesConsumed];
                var item = ProjectJson.Deserialize<ItemDefinition>(element, source, line, FieldPath.Item(index), collector.Problems);
                if (item is not null)
                    collector.Accept(item, index, line);
            }
            json.Read(); // throws if anything but whitespace follows the array
        }
        catch (JsonException ex)
        {
            collector.Problems.Add(checker.SyntaxProblem(ex));
        }
        return collector.Result();
    }

    internal static ItemReadResult ReadCsvWithLines(TextReader reader, string source, ItemReaderLimits? limits)
    {
        ArgumentNullException.ThrowIfNull(reader);
        var collector = new Collector(source, limits ?? ItemReaderLimits.Default);
        var csv = new CsvRecordReader(reader);
        var header = csv.Read();
        if (header is null || header.IsBlank)
        {
            collector.Problems.Add(new ProjectProblem(source, 1, null, "there is no header row"));
            return collector.Result();
        }
        var columns = CsvLayout.Parse(header, source, collector.Problems);
        if (columns is null)
            return collector.Result();

        while (csv.Read() is { } record)
        {
            if (record.IsBlank)
                continue;
            if (!collector.TryBegin(record.Line, out var index))
                break;
            var item = columns.ToItem(record, index, collector.Problems);
            if (item is not null)
                collector.Accept(item, index, record.Line);
        }
        return collector.Result();
    }

    /// <summary>Items that read cleanly, the line each started on (parallel to the items), and the problems found.</summary>
    internal sealed record ItemReadResult(IReadOnlyList<ItemDefinition> Items, IReadOnlyList<int> Lines, IReadOnlyList<ProjectProblem> Problems)
    {
        public (IReadOnlyList<ItemDefinition> items, IReadOnlyList<ProjectProblem> problems) ToTuple() => (Items, Problems);
    }

    /// <summary>Counts records against the item limit and keeps each item only if its strings are within the length limit.</summary>
    private sealed class Collector(string source, ItemReaderLimits limits)
    {
        private readonly List<ItemDefinition> _items = [];
        private readonly List<int> _lines = [];
        private int _records;

        public List<ProjectProblem> Problems { get; } = [];

        public bool TryBegin(int line, out int index)
        {
            index = _records;
            if (_records >= limits.MaxItems)
            {
                Problems.Add(new ProjectProblem(source, line, null, $"more than {limits.MaxItems} items; the rest were not read"));
                return false;
            }
            _records++;
            return true;
        }

        public void Accept(ItemDefinition item, int index, int line)
        {
            var before = Problems.Count;
            var path = FieldPath.Item(index);
            CheckLength(item.Id, FieldPath.Member(path, "id"), line);
            CheckLength(item.Pool, FieldPath.Member(path, "pool"), line);
            CheckLength(item.Label, FieldPath.Member(path, "label"), line);
            CheckLength(item.Explanation, FieldPath.Member(path, "explanation"), line);
            if (item.Content is { } content)
            {
                var contentPath = FieldPath.Member(path, "content");
                CheckLength(content.Text, FieldPath.Member(contentPath, "text"), line);
                CheckLength(content.ImageUrl, FieldPath.Member(contentPath, "imageUrl"), line);
                CheckLength(content.Svg, FieldPath.Member(contentPath, "svg"), line);
            }
            foreach (var name in item.Features?.Keys ?? [])
                CheckLength(name, FieldPath.Member(path, "features"), line);
            if (item.Attributes is { } attributes)
            {
                for (var i = 0; i < attributes.Count; i++)
                    CheckLength(attributes[i], FieldPath.Index(FieldPath.Member(path, "attributes"), i), line);
            }
            if (Problems.Count > before)
                return;
            _items.Add(item);
            _lines.Add(line);
        }

        public ItemReadResult Result() => new(_items, _lines, Problems);

        private void CheckLength(string? value, string field, int line)
        {
            if (value is not null && value.Length > limits.MaxStringLength)
                Problems.Add(new ProjectProblem(source, line, field, $"{value.Length} characters; the limit is {limits.MaxStringLength}"));
        }
    }

    /// <summary>What each CSV column holds, read from the header row.</summary>
    private sealed class CsvLayout
    {
        private readonly string _source;
        private readonly Dictionary<string, int> _fixed = new(StringComparer.OrdinalIgnoreCase);
        private readonly List<(string Name, int Column)> _features = [];
        private readonly List<(string Name, int Column)> _attributes = [];
        private int _width;

        private CsvLayout(string source) => _source = source;

        public static CsvLayout? Parse(CsvRecord header, string source, List<ProjectProblem> problems)
        {
            var layout = new CsvLayout(source) { _width = header.Cells.Count };
            if (header.Error is not null)
                problems.Add(new ProjectProblem(source, header.Line, null, header.Error));
            var seen = new HashSet<string>(StringComparer.OrdinalIgnoreCase);
            for (var column = 0; column < header.Cells.Count; column++)
            {
                var name = header.Cells[column].Trim();
                if (!seen.Add(name))
                {
                    problems.Add(new ProjectProblem(source, header.Line, null, $"column '{name}' appears more than once"));
                    continue;
                }
                if (name.StartsWith(CsvFeaturePrefix, StringComparison.Ordinal) && name.Length > CsvFeaturePrefix.Length)
                    layout._features.Add((name[CsvFeaturePrefix.Length..], column));
                else if (name.StartsWith(CsvAttributePrefix, StringComparison.Ordinal) && name.Length > CsvAttributePrefix.Length)
                    layout._attributes.Add((name[CsvAttributePrefix.Length..], column));
                else if (CsvColumns.Contains(name, StringComparer.OrdinalIgnoreCase))
                    layout._fixed[name] = column;
                else
                    problems.Add(new ProjectProblem(source, header.Line, null,
                        $"unknown column '{name}'; expected {string.Join(", ", CsvColumns)}, {CsvFeaturePrefix}<name> or {CsvAttributePrefix}<name>"));
            }
            var complete = true;
            foreach (var required in (ReadOnlySpan<string>)["id", "pool", "label"])
            {
                if (!layout._fixed.ContainsKey(required))
                {
                    problems.Add(new ProjectProblem(source, header.Line, null, $"the required column '{required}' is missing"));
                    complete = false;
                }
            }
            return complete ? layout : null;
        }

        public ItemDefinition? ToItem(CsvRecord record, int index, List<ProjectProblem> problems)
        {
            var path = FieldPath.Item(index);
            if (record.Error is not null)
            {
                problems.Add(new ProjectProblem(_source, record.Line, path, record.Error));
                return null;
            }
            if (record.Cells.Count != _width)
            {
                problems.Add(new ProjectProblem(_source, record.Line, path, $"{record.Cells.Count} cells; the header has {_width}"));
                return null;
            }
            var before = problems.Count;
            var features = _features.Count == 0 ? null : ReadFeatures(record, path, problems);
            var attributes = _attributes.Count == 0 && !_fixed.ContainsKey("attributes") ? null : ReadAttributes(record, path, problems);
            if (problems.Count > before)
                return null;

            var text = Optional(record, "text");
            var imageUrl = Optional(record, "imageUrl");
            var svg = Optional(record, "svg");
            return new ItemDefinition
            {
                Id = Cell(record, "id")!.Trim(),
                Pool = Cell(record, "pool")!.Trim(),
                Label = Cell(record, "label")!.Trim(),
                Explanation = Optional(record, "explanation"),
                Features = features,
                Attributes = attributes,
                Content = text is null && imageUrl is null && svg is null
                    ? null
                    : new ItemContent { Text = text, ImageUrl = imageUrl, Svg = svg },
            };
        }

        private Dictionary<string, double> ReadFeatures(CsvRecord record, string path, List<ProjectProblem> problems)
        {
            var features = new Dictionary<string, double>(StringComparer.Ordinal);
            foreach (var (name, column) in _features)
            {
                var cell = record.Cells[column].Trim();
                if (cell.Length == 0)
                    continue;
                if (double.TryParse(cell, NumberStyles.Float, CultureInfo.InvariantCulture, out var value))
                    features[name] = value;
                else
                    problems.Add(new ProjectProblem(_source, record.Line, FieldPath.Member(FieldPath.Member(path, "features"), name),
                        $"'{cell}' is not a number"));
            }
            return features;
        }

        private List<string> ReadAttributes(CsvRecord record, string path, List<ProjectProblem> problems)
        {
            var attributes = new List<string>();
            foreach (var (name, column) in _attributes)
            {
                switch (record.Cells[column].Trim())
                {
                    case "1":
                        attributes.Add(name);
                        break;
                    case "0" or "":
                        break;
                    case var other:
                        problems.Add(new ProjectProblem(_source, record.Line, FieldPath.Member(path, "attributes"),
                            $"column '{CsvAttributePrefix}{name}' must be 0 or 1, found '{other}'"));
                        break;
                }
            }
            if (Cell(record, "attributes") is { } list)
            {
                foreach (var name in list.Split(';', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries))
                {
                    if (!attributes.Contains(name))
                        attributes.Add(name);
                }
            }
            return attributes;
        }

        private string? Cell(CsvRecord record, string column) =>
            _fixed.TryGetValue(column, out var i) ? record.Cells[i] : null;

        private string? Optional(CsvRecord record, string column) =>
            Cell(record, column) is { Length: > 0 } value ? value : null;
    }
}
