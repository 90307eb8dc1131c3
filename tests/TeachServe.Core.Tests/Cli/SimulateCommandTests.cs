using System.Text.Json;
using TeachServe.Cli;
using TeachServe.Cli.Commands;
using TeachServe.Core.Tests.Engine;
using TeachServe.Core.Tests.Projects;

namespace TeachServe.Core.Tests.Cli;

public class SimulateCommandTests
{
    private static (int Code, string Output, string Error) Run(params string[] args) => CliRun.Run(args);

    private static string Seed(string name) => CliRun.Seed(name);

    [Fact]
    public void Compile_prints_the_version_summary()
    {
        var (code, output, error) = Run("compile", Seed("weld-seams"), "--json");
        Assert.Equal((0, ""), (code, error));
        using var json = JsonDocument.Parse(output);
        var root = json.RootElement;
        Assert.Equal("linear", root.GetProperty("family").GetString());
        Assert.True(root.GetProperty("hypotheses").GetInt32() <= root.GetProperty("hypothesesGenerated").GetInt32());
        Assert.True(root.GetProperty("teachingDimensionEstimate").GetInt32() >= 1);
        var histogram = root.GetProperty("errorHistogram").EnumerateArray().Sum(e => e.GetInt32());
        Assert.Equal(root.GetProperty("hypotheses").GetInt32(), histogram);
    }

    [Fact]
    public void Simulate_json_has_the_documented_fields_and_is_reproducible()
    {
        string[] args = ["simulate", Seed("leaf-symptoms"), "--policy", "adaptive", "--learners", "40", "--seed", "5", "--json"];
        var (code, output, error) = Run(args);
        Assert.Equal((0, ""), (code, error));
        Assert.Equal(output, Run(args).Output);
        using var json = JsonDocument.Parse(output);
        var root = json.RootElement;
        Assert.Equal("adaptive", root.GetProperty("policy").GetString());
        Assert.Equal(40, root.GetProperty("learners").GetInt32());
        var released = root.GetProperty("released").GetInt32();
        Assert.Equal(released / 40.0, root.GetProperty("releaseRate").GetDouble(), 12);
        foreach (var field in new[] { "releasePrecision", "meanTeachingItems", "meanTestItems" })
        {
            Assert.True(root.TryGetProperty(field, out _), field);
        }

        var curve = root.GetProperty("curve").EnumerateArray().ToArray();
        Assert.Equal(0, curve[0].GetProperty("step").GetInt32());
        Assert.All(curve, p => Assert.InRange(p.GetProperty("meanTrueError").GetDouble(), p.GetProperty("low").GetDouble(), p.GetProperty("high").GetDouble()));
    }

    [Fact]
    public void Compare_writes_csv_png_and_svg_for_every_policy()
    {
        using var dir = new TempDirectory();
        var (code, _, error) = Run("simulate", Seed("ticket-triage"), "--compare", "random,adaptive", "--learners", "20", "--seed", "2", "--out", dir.Path);
        Assert.Equal(0, code);
        Assert.DoesNotContain("teachserve:", error, StringComparison.Ordinal);
        var csv = File.ReadAllLines(Path.Combine(dir.Path, "compare.csv"));
        Assert.Equal("policy,variant,step,meanTrueError,low,high", csv[0]);
        Assert.Contains(csv, l => l.StartsWith("random,assumed,0,", StringComparison.Ordinal));
        Assert.Contains(csv, l => l.StartsWith("adaptive,assumed,0,", StringComparison.Ordinal));
        var png = File.ReadAllBytes(Path.Combine(dir.Path, "compare.png"));
        Assert.Equal(new byte[] { 0x89, 0x50, 0x4E, 0x47 }, png[..4]);
        Assert.Contains("<svg", File.ReadAllText(Path.Combine(dir.Path, "compare.svg")), StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("--policy", "greedy-ish")]
    [InlineData("--learners", "0")]
    [InlineData("--learner-variant", "sleepy")]
    [InlineData("--blend", "-1")]
    public void Bad_simulation_options_exit_2(string option, string value)
    {
        var (code, _, error) = Run("simulate", Seed("weld-seams"), option, value, "--json");
        Assert.Equal(2, code);
        Assert.NotEmpty(error);
    }

    [Fact]
    public void A_broken_project_folder_lists_its_problems_and_exits_1()
    {
        using var dir = new TempDirectory();
        File.WriteAllText(Path.Combine(dir.Path, "project.json"), "{\"name\":\"x\",\"labels\":[\"a\"],\"family\":{\"kind\":\"linear\"}}");
        File.WriteAllText(Path.Combine(dir.Path, "items.jsonl"), "");
        var (code, _, error) = Run("compile", dir.Path);
        Assert.Equal(1, code);
        Assert.Contains("labels", error, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("seed-projects/ticket-triage", "compare-ticket-triage")]
    [InlineData("seed-projects/ticket-triage/", "compare-ticket-triage")]
    public void Compare_without_out_writes_to_a_folder_of_its_own_named_after_the_project(string project, string folder)
    {
        Assert.Equal(folder, SimulateCommand.DefaultCompareFolder(project));
    }
}
