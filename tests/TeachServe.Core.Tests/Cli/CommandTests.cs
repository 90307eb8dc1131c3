using TeachServe.Cli.Commands;
using TeachServe.Cli.Seeds;
using TeachServe.Core.Projects;
using TeachServe.Core.Tests.Projects;

namespace TeachServe.Core.Tests.Cli;

public class CommandTests
{
    [Theory]
    [InlineData]
    [InlineData("frobnicate")]
    [InlineData("seed")]
    [InlineData("seed", "plant")]
    [InlineData("seed", "generate")]
    [InlineData("seed", "generate", "weld-seams")]
    [InlineData("seed", "generate", "weld-seams", "--out")]
    [InlineData("seed", "generate", "no-such-seed", "--out", "x")]
    [InlineData("seed", "generate", "weld-seams", "--out", "x", "--seed", "many")]
    [InlineData("seed", "generate", "weld-seams", "--out", "x", "--colour", "red")]
    [InlineData("seed", "generate", "weld-seams", "leaf-symptoms", "--out", "x")]
    [InlineData("seed", "generate", "weld-seams", "--out", "x", "--out", "y")]
    public void Bad_command_lines_print_usage_and_exit_2(params string[] args)
    {
        var (code, output, error) = Run(args);
        Assert.Equal(ExitCodes.Usage, code);
        Assert.Empty(output);
        Assert.StartsWith("teachserve: ", error, StringComparison.Ordinal);
        Assert.Contains("usage: teachserve", error, StringComparison.Ordinal);
        Assert.False(Directory.Exists("x"));
    }

    [Fact]
    public void Help_lists_every_verb_and_exits_0()
    {
        var (code, output, _) = Run(["help"]);
        Assert.Equal(ExitCodes.Ok, code);
        Assert.Contains("seed generate NAME --out DIR", output, StringComparison.Ordinal);
    }

    [Fact]
    public void Seed_list_names_every_seed_project()
    {
        var (code, output, _) = Run(["seed", "list"]);
        Assert.Equal(ExitCodes.Ok, code);
        Assert.All(SeedCatalog.All, s => Assert.Contains(s.Name, output, StringComparison.Ordinal));
    }

    [Fact]
    public void Seed_generate_writes_a_loadable_folder()
    {
        using var dir = new TempDirectory();
        var target = dir.File("tickets");
        var (code, output, error) = Run(["seed", "generate", "ticket-triage", $"--out={target}", "--seed", "9"]);
        Assert.Equal((ExitCodes.Ok, ""), (code, error));
        Assert.Contains("(seed 9): 240 teach and 100 test items", output, StringComparison.Ordinal);
        Assert.Equal(340, ProjectFolder.Load(target).Items.Count);
        Assert.True(File.Exists(Path.Combine(target, SeedWriter.ReadmeFileName)));
    }

    [Fact]
    public void An_invalid_generated_project_prints_every_problem_writes_nothing_and_exits_1()
    {
        var broken = new SeedProject("broken", 1, "", _ => new ProjectDefinition(
            ProjectSamples.Settings() with { Policy = "nope" },
            [.. ProjectSamples.Items().Select(i => i with { Pool = Pools.Teach })]), _ => "");
        using var dir = new TempDirectory();
        var target = dir.File("out");
        var problems = SeedWriter.Write(broken, 1, target, out _);
        Assert.False(Directory.Exists(target));

        var error = new StringWriter();
        Assert.Equal(ExitCodes.Invalid, ProblemReport.Fail(error, problems));
        Assert.Equal(
            "teachserve: 2 problems:\n  project.json: policy: unknown policy 'nope'; expected random, cover, stochastic-greedy, adaptive, easy-first\n"
            + "  items.jsonl: items: the test pool is empty\n",
            error.ToString().ReplaceLineEndings("\n"));
    }

    private static (int Code, string Output, string Error) Run(string[] args)
    {
        var output = new StringWriter();
        var error = new StringWriter();
        var code = TeachServe.Cli.Program.Run(args, output, error);
        return (code, output.ToString(), error.ToString());
    }
}
