using System.Text.Json;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Projects;

public class ProjectJsonTests
{
    private const string File = "project.json";

    [Fact]
    public void Valid_settings_read_with_defaults_for_what_is_left_out()
    {
        var (settings, problems) = ProjectJson.ReadSettings(ProjectSamples.SettingsJson, File);
        Assert.Empty(problems);
        Assert.NotNull(settings);
        Assert.Equal(["left", "right"], settings.Labels);
        Assert.Equal(40, settings.Gate.Test.MaxItems);
        Assert.Equal(new LearnerSettings(), settings.Learner);
        Assert.Equal(PolicyNames.Adaptive, settings.Policy);
    }

    [Fact]
    public void A_misspelt_member_is_reported_with_its_line_and_a_suggestion()
    {
        var json = ProjectSamples.SettingsJson.Replace("\"targetError\"", "\"targetEror\"", StringComparison.Ordinal);
        var (settings, problems) = ProjectJson.ReadSettings(json, File);
        Assert.Null(settings);
        var problem = ProjectValidatorTests.AssertOnly(problems, File, 6, "gate.targetEror");
        Assert.Contains("did you mean 'targetError'", problem.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Every_unknown_member_is_reported_not_only_the_first()
    {
        var json = """
            {
              "name": "sample",
              "labels": ["a", "b"],
              "family": { "kind": "cues", "maxCue": 2 },
              "colour": "blue",
              "gate": { "test": { "mode": "fixed", "lenght": 5 } }
            }
            """;
        var (_, problems) = ProjectJson.ReadSettings(json, File);
        Assert.Equal(
            [(File, (int?)4, "family.maxCue"), (File, 5, "colour"), (File, 6, "gate.test.lenght")],
            problems.Select(p => (p.File, p.Line, p.Field)));
        Assert.Contains("expected one of: name, labels", problems[1].Message, StringComparison.Ordinal);
    }

    [Fact]
    public void A_missing_required_member_is_reported_at_its_object()
    {
        var json = """
            {
              "name": "sample",
              "labels": ["a", "b"],
              "family": {
                "seed": 3
              }
            }
            """;
        var (_, problems) = ProjectJson.ReadSettings(json, File);
        ProjectValidatorTests.AssertOnly(problems, File, 4, "family.kind");
    }

    [Fact]
    public void A_value_of_the_wrong_type_is_reported()
    {
        var json = ProjectSamples.SettingsJson.Replace("0.1", "\"low\"", StringComparison.Ordinal);
        var (_, problems) = ProjectJson.ReadSettings(json, File);
        var problem = ProjectValidatorTests.AssertOnly(problems, File, 6, "gate.targetError");
        Assert.Equal("expected a number, found a string", problem.Message);
    }

    [Fact]
    public void A_fraction_where_a_count_belongs_is_reported()
    {
        var json = ProjectSamples.SettingsJson.Replace("\"maxItems\": 40", "\"maxItems\": 40.5", StringComparison.Ordinal);
        var (_, problems) = ProjectJson.ReadSettings(json, File);
        ProjectValidatorTests.AssertOnly(problems, File, 7, "gate.test.maxItems");
    }

    [Fact]
    public void Null_in_a_non_nullable_member_is_reported()
    {
        var json = ProjectSamples.SettingsJson.Replace("\"sample\"", "null", StringComparison.Ordinal);
        var (_, problems) = ProjectJson.ReadSettings(json, File);
        ProjectValidatorTests.AssertOnly(problems, File, 2, "name");
    }

    [Fact]
    public void A_member_given_twice_is_reported_at_the_second()
    {
        var json = ProjectSamples.SettingsJson.Replace("\"name\": \"sample\",", "\"name\": \"sample\", \"name\": \"other\",", StringComparison.Ordinal);
        var (_, problems) = ProjectJson.ReadSettings(json, File);
        ProjectValidatorTests.AssertOnly(problems, File, 2, "name");
    }

    [Fact]
    public void A_syntax_error_is_reported_with_its_line()
    {
        var json = ProjectSamples.SettingsJson.Replace("\"family\": { \"kind\": \"linear\" },", "\"family\": { \"kind\": \"linear\" }", StringComparison.Ordinal);
        var (settings, problems) = ProjectJson.ReadSettings(json, File);
        Assert.Null(settings);
        var problem = Assert.Single(problems);
        Assert.Equal((File, (int?)5), (problem.File, problem.Line));
        Assert.StartsWith("invalid JSON: ", problem.Message, StringComparison.Ordinal);
        Assert.DoesNotContain("LineNumber", problem.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Trailing_content_after_the_object_is_a_syntax_error()
    {
        var (_, problems) = ProjectJson.ReadSettings(ProjectSamples.SettingsJson + "\n{}", File);
        Assert.Equal(10, Assert.Single(problems).Line);
    }

    [Theory]
    [InlineData("")]
    [InlineData("  \n ")]
    public void An_empty_document_is_reported(string json)
    {
        var (settings, problems) = ProjectJson.ReadSettings(json, File);
        Assert.Null(settings);
        Assert.Equal(File, Assert.Single(problems).File);
    }

    [Fact]
    public void Null_document_is_not_settings()
    {
        var (_, problems) = ProjectJson.ReadSettings("null", File);
        Assert.Equal("expected an object, found null", Assert.Single(problems).Message);
    }

    [Fact]
    public void The_shared_options_reject_unknown_members_when_used_directly()
    {
        var json = ProjectSamples.SettingsJson.Replace("\"targetError\"", "\"targetEror\"", StringComparison.Ordinal);
        Assert.Throws<JsonException>(() => JsonSerializer.Deserialize<ProjectSettings>(json, ProjectJson.Options));
    }

    [Fact]
    public void Serialized_settings_read_back_to_the_same_text()
    {
        var settings = ProjectSamples.Settings(FamilyKinds.Table) with
        {
            Family = ProjectSamples.Settings().Family with
            {
                Kind = FamilyKinds.Table,
                Table = [new TableHypothesis { Name = "h", Prior = 2, Predictions = new Dictionary<string, string> { ["i0"] = "right" } }],
            },
        };
        var text = ProjectJson.SerializeSettings(settings);
        var (read, problems) = ProjectJson.ReadSettings(text, File);
        Assert.Empty(problems);
        Assert.Equal(text, ProjectJson.SerializeSettings(read!));
        Assert.EndsWith("}\n", text, StringComparison.Ordinal);
        Assert.DoesNotContain("\r", text, StringComparison.Ordinal);
        Assert.Contains("\n  \"labels\": [", text, StringComparison.Ordinal);
    }

    [Fact]
    public void Item_lines_keep_markup_legible_and_leave_out_nulls()
    {
        var item = new ItemDefinition
        {
            Id = "a",
            Pool = Pools.Teach,
            Label = "left",
            Content = new ItemContent { Svg = "<svg xmlns='http://www.w3.org/2000/svg'><circle r=\"2\"/></svg>" },
        };
        Assert.Equal(
            """{"id":"a","pool":"teach","label":"left","content":{"svg":"<svg xmlns='http://www.w3.org/2000/svg'><circle r=\"2\"/></svg>"}}""",
            ProjectJson.SerializeItem(item));
    }
}
