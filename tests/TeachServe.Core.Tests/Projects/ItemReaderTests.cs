using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Projects;

public class ItemReaderTests
{
    private const string Source = "request body";

    [Fact]
    public void Json_lines_skip_blank_lines_and_keep_each_item_line()
    {
        var text = """
            {"id":"a","pool":"teach","label":"left","features":{"x":1.5},"content":{"text":"A"}}

            {"id":"b","pool":"test","label":"right","attributes":["bright"],"content":{"imageUrl":"https://example.org/b.png"},"explanation":"why"}
            """;
        var result = ItemReader.ReadJsonLinesWithLines(new StringReader(text), Source, null);
        Assert.Empty(result.Problems);
        Assert.Equal(["a", "b"], result.Items.Select(i => i.Id));
        Assert.Equal([1, 3], result.Lines);
        Assert.Equal(1.5, result.Items[0].Features!["x"]);
        Assert.Equal(["bright"], result.Items[1].Attributes!);
        Assert.Equal("why", result.Items[1].Explanation);
    }

    [Fact]
    public void Json_lines_report_every_bad_line_and_keep_reading()
    {
        var text = """
            {"id":"a","pool":"teach","label":"left","content":{"text":"A"}}
            {"id":"b","pool":"teach" "label":"left"}
            {"id":"c","pool":"teach","label":"left","content":{"text":"C"}}
            {"id":"d","pool":"teach","lable":"left"}
            {"id":"e","pool":"test","label":"left","features":{"x":"wide"}}
            {"id":"f","pool":"test","label":"right","content":{"text":"F"}}
            """;
        var (items, problems) = ItemReader.ReadJsonLines(new StringReader(text), Source);
        Assert.Equal(["a", "c", "f"], items.Select(i => i.Id));
        Assert.Equal(
            [(2, "items[1].pool"), (4, "items[3].lable"), (4, "items[3].label"), (5, "items[4].features.x")],
            problems.Select(p => (p.Line!.Value, p.Field!)));
        Assert.All(problems, p => Assert.Equal(Source, p.File));
        Assert.Contains("did you mean 'label'", problems[1].Message, StringComparison.Ordinal);
        Assert.Equal("'label' is missing", problems[2].Message);
    }

    [Fact]
    public void A_line_that_is_not_an_object_is_reported()
    {
        var (items, problems) = ItemReader.ReadJsonLines(new StringReader("[1,2]\n\"x\""), Source);
        Assert.Empty(items);
        Assert.Equal([(1, "items[0]"), (2, "items[1]")], problems.Select(p => (p.Line!.Value, p.Field!)));
    }

    [Fact]
    public void Reading_stops_at_the_item_limit_and_says_so()
    {
        var lines = string.Join("\n", Enumerable.Range(0, 4).Select(i => $$"""{"id":"i{{i}}","pool":"teach","label":"left"}"""));
        var (items, problems) = ItemReader.ReadJsonLines(new StringReader(lines), Source, new ItemReaderLimits { MaxItems = 2 });
        Assert.Equal(2, items.Count);
        var problem = ProjectValidatorTests.AssertOnly(problems, Source, 3, null);
        Assert.Contains("more than 2 items", problem.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Strings_over_the_length_limit_are_reported_and_the_item_dropped()
    {
        var text = """
            {"id":"a","pool":"teach","label":"left","content":{"text":"0123456789"}}
            {"id":"b","pool":"teach","label":"left","content":{"svg":"<svg>long enough</svg>"}}
            {"id":"c","pool":"teach","label":"left","features":{"a_very_long_name":1}}
            """;
        var (items, problems) = ItemReader.ReadJsonLines(new StringReader(text), Source, new ItemReaderLimits { MaxStringLength = 10 });
        Assert.Equal(["a"], items.Select(i => i.Id));
        Assert.Equal([(2, "items[1].content.svg"), (3, "items[2].features")], problems.Select(p => (p.Line!.Value, p.Field!)));
        Assert.Equal("22 characters; the limit is 10", problems[0].Message);
    }

    [Fact]
    public void Json_array_items_carry_the_line_they_start_on()
    {
        var text = """
            [
              {"id":"a","pool":"teach","label":"left","content":{"text":"A"}},
              {
                "id": "b",
                "pool": "test",
                "label": "right",
                "content": { "svg": "<svg xmlns='http://www.w3.org/2000/svg'/>" }
              }
            ]
            """;
        var result = ItemReader.ReadJsonArrayWithLines(new StringReader(text), Source, null);
        Assert.Empty(result.Problems);
        Assert.Equal(["a", "b"], result.Items.Select(i => i.Id));
        Assert.Equal([2, 3], result.Lines);
    }

    [Fact]
    public void Json_array_reports_every_bad_element_and_keeps_the_good_ones()
    {
        var text = """
            [
              {"id":"a","pool":"teach","label":"left"},
              {"id":"b","pool":"teach",
               "label":"left", "features": {"x": 1, "x": 2}},
              {"id":"c","pool":"teach","label":"left"},
              17,
              {"id":"e","pool":"teach","label":true}
            ]
            """;
        var (items, problems) = ItemReader.ReadJsonArray(new StringReader(text), Source);
        Assert.Equal(["a", "c"], items.Select(i => i.Id));
        Assert.Equal([(4, "items[1].features.x"), (6, "items[3]"), (7, "items[4].label")], problems.Select(p => (p.Line!.Value, p.Field!)));
    }

    [Fact]
    public void Json_array_must_be_an_array()
    {
        var (_, problems) = ItemReader.ReadJsonArray(new StringReader("\n{\"id\":\"a\"}"), Source);
        var problem = ProjectValidatorTests.AssertOnly(problems, Source, 2, null);
        Assert.Equal("expected a JSON array of items", problem.Message);
    }

    [Fact]
    public void Json_array_syntax_error_keeps_the_items_before_it()
    {
        var text = "[\n{\"id\":\"a\",\"pool\":\"teach\",\"label\":\"left\"},\n{\"id\":\"b\",,}\n]";
        var (items, problems) = ItemReader.ReadJsonArray(new StringReader(text), Source);
        Assert.Equal(["a"], items.Select(i => i.Id));
        var problem = ProjectValidatorTests.AssertOnly(problems, Source, 3, "items[1].id");
        Assert.StartsWith("invalid JSON", problem.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Csv_reads_fixed_columns_features_and_attributes()
    {
        var csv = """
            id,pool,label,explanation,text,imageUrl,svg,f:width,f:depth,a:bright,a:round,attributes
            s1,teach,left,"Thin, so left",,,"<svg xmlns='http://www.w3.org/2000/svg'>
            <circle r=""2""/></svg>",1.5,-2e-1,1,0,striped; dotted
            s2,test,right,,Plain text,https://example.org/2.png,,3,,0,1,
            """;
        var result = ItemReader.ReadCsvWithLines(new StringReader(csv), Source, null);
        Assert.Empty(result.Problems);
        Assert.Equal([2, 4], result.Lines);
        var first = result.Items[0];
        Assert.Equal(("s1", "teach", "left", "Thin, so left"), (first.Id, first.Pool, first.Label, first.Explanation));
        Assert.Equal("<svg xmlns='http://www.w3.org/2000/svg'>\n<circle r=\"2\"/></svg>", first.Content!.Svg);
        Assert.Null(first.Content.Text);
        Assert.Equal(new Dictionary<string, double> { ["width"] = 1.5, ["depth"] = -0.2 }, first.Features);
        Assert.Equal(["bright", "striped", "dotted"], first.Attributes!);
        var second = result.Items[1];
        Assert.Equal(("Plain text", "https://example.org/2.png"), (second.Content!.Text, second.Content.ImageUrl));
        Assert.Equal(new Dictionary<string, double> { ["width"] = 3 }, second.Features);
        Assert.Equal(["round"], second.Attributes!);
        Assert.Null(second.Explanation);
    }

    [Fact]
    public void Csv_without_feature_or_attribute_columns_leaves_them_null()
    {
        var (items, problems) = ItemReader.ReadCsv(new StringReader("ID,Pool,Label,Text\r\nx,teach,left,hello\r\n"), Source);
        Assert.Empty(problems);
        var item = Assert.Single(items);
        Assert.Null(item.Features);
        Assert.Null(item.Attributes);
        Assert.Equal("hello", item.Content!.Text);
    }

    [Fact]
    public void Csv_reports_every_bad_row_with_its_line_and_field()
    {
        var csv = "id,pool,label,text,f:width,a:bright\r\n"
            + "r1,teach,left,ok,1,1\r\n"
            + "r2,teach,left,ok,wide,1\r\n"
            + "r3,teach,left,ok,2,yes\r\n"
            + "\r\n"
            + "r4,teach,left,\"two\r\nlines\",3\r\n"
            + "r5,teach,left,\"ok\"x,4,0\r\n"
            + "r6,test,right,fine,5,0\r\n"
            + "r7,test,right,\"never closed,6,0\r\n";
        var (items, problems) = ItemReader.ReadCsv(new StringReader(csv), Source);
        Assert.Equal(["r1", "r6"], items.Select(i => i.Id));
        Assert.Equal(
            [(3, "items[1].features.width"), (4, "items[2].attributes"), (6, "items[3]"), (8, "items[4]"), (10, "items[6]")],
            problems.Select(p => (p.Line!.Value, p.Field!)));
        Assert.Equal("'wide' is not a number", problems[0].Message);
        Assert.Equal("5 cells; the header has 6", problems[2].Message);
    }

    [Fact]
    public void Csv_header_problems_are_reported()
    {
        var (items, problems) = ItemReader.ReadCsv(new StringReader("id,label,colour,text,text\nx,left,red,a,b\n"), Source);
        Assert.Empty(items);
        Assert.Equal(
            ["column 'text' appears more than once", "the required column 'pool' is missing"],
            problems.Where(p => !p.Message.StartsWith("unknown", StringComparison.Ordinal)).Select(p => p.Message));
        Assert.Contains(problems, p => p.Message.StartsWith("unknown column 'colour'", StringComparison.Ordinal));
        Assert.All(problems, p => Assert.Equal((Source, (int?)1, (string?)null), (p.File, p.Line, p.Field)));
    }

    [Fact]
    public void Csv_non_finite_numbers_parse_and_are_left_to_the_validator()
    {
        var (items, problems) = ItemReader.ReadCsv(new StringReader("id,pool,label,text,f:x\na,teach,left,t,NaN\n"), Source);
        Assert.Empty(problems);
        Assert.True(double.IsNaN(items[0].Features!["x"]));
    }

    [Fact]
    public void Csv_item_limit_applies()
    {
        var csv = "id,pool,label\na,teach,left\nb,teach,left\nc,teach,left\n";
        var (items, problems) = ItemReader.ReadCsv(new StringReader(csv), Source, new ItemReaderLimits { MaxItems = 1 });
        Assert.Single(items);
        ProjectValidatorTests.AssertOnly(problems, Source, 3, null);
    }

    [Fact]
    public void Csv_needs_a_header()
    {
        var (_, problems) = ItemReader.ReadCsv(new StringReader(""), Source);
        ProjectValidatorTests.AssertOnly(problems, Source, 1, null);
    }

    [Fact]
    public void The_three_formats_read_the_same_items()
    {
        var expected = ProjectSamples.Items();
        var jsonl = new StringWriter();
        ProjectJson.WriteJsonLines(jsonl, expected);
        var array = "[" + string.Join(",\n", expected.Select(ProjectJson.SerializeItem)) + "]";
        var csv = "id,pool,label,text,f:x,f:y,attributes\n" + string.Concat(expected.Select(i =>
            $"{i.Id},{i.Pool},{i.Label},{i.Content!.Text},{i.Features!["x"]},{i.Features["y"]},{string.Join(';', i.Attributes!)}\n"));

        foreach (var (items, problems) in new[]
        {
            ItemReader.ReadJsonLines(new StringReader(jsonl.ToString()), Source),
            ItemReader.ReadJsonArray(new StringReader(array), Source),
            ItemReader.ReadCsv(new StringReader(csv), Source),
        })
        {
            Assert.Empty(problems);
            Assert.Equal(expected.Select(ProjectJson.SerializeItem), items.Select(ProjectJson.SerializeItem));
        }
    }
}
