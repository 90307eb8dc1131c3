using System.Globalization;
using TeachServe.Cli;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;
using TeachServe.Core.Tests.Engine;
using TeachServe.Core.Tests.Projects;

namespace TeachServe.Core.Tests.Cli;

public class GateCommandTests
{
    private static (int Code, string Output, string Error) Run(params string[] args) => CliRun.Run(args);

    private static string Seed(string name) => CliRun.Seed(name);

    [Fact]
    public void The_report_shows_the_exact_rates_of_the_projects_test_and_a_simulation_row_per_variant_and_mode()
    {
        string[] args = ["gate", Seed("ticket-triage"), "--learners", "60", "--seed", "3", "--modes", "sequential,belief", "--variants", "assumed,random-answers"];
        var (code, output, error) = Run(args);
        Assert.Equal((0, ""), (code, error));
        Assert.Equal(output, Run(args).Output);

        var project = ProjectFolder.Load(Seed("ticket-triage"));
        var design = GateDesign.Create(project.Settings.Gate, project.Settings.Labels.Count, project.Settings.Learner.Lapse);
        Assert.Contains(FormattableString.Invariant($"P(attempt fails | target) {design.Test.AchievedAlpha:F4}"), output, StringComparison.Ordinal);
        // The operating characteristic at the target, as the engine computes it.
        var atTarget = design.OperatingCharacteristic([project.Settings.Gate.TargetError]).Single();
        Assert.Contains(FormattableString.Invariant($"{atTarget.AttemptRelease,14:F3}"), output, StringComparison.Ordinal);

        var rows = output.Split('\n').Where(l => l.StartsWith("assumed ", StringComparison.Ordinal) || l.StartsWith("random-answers ", StringComparison.Ordinal)).ToArray();
        Assert.Equal(4, rows.Length);
        // Nobody answering at random is released by the exact test.
        Assert.Contains(rows, r => r.StartsWith("random-answers  sequential 0.000", StringComparison.Ordinal));
    }

    [Theory]
    [InlineData("--modes", "wald")]
    [InlineData("--variants", "sleepy")]
    [InlineData("--former", "30,0.15")]
    [InlineData("--learners", "0")]
    public void Bad_options_exit_2(string option, string value)
    {
        var (code, _, error) = Run("gate", Seed("weld-seams"), option, value);
        Assert.Equal(2, code);
        Assert.NotEmpty(error);
    }
}

public class CostPerQualifiedReleaseTests
{
    [Fact]
    public void Cost_is_items_and_minutes_paid_plus_the_gates_mistakes_over_qualified_releases()
    {
        // Recomputed here from the result's own counts with the documented formula (CostSettings).
        var project = ProjectFolder.Load(Path.Combine(SeedModels.RepositoryRoot(), "seed-projects", "weld-seams"));
        var model = ModelCompiler.Compile(project);
        var cost = new CostSettings { PerTeachingItem = 0.1, PerTestItem = 0.2, PerMinute = 0.3, SecondsPerItem = 30, FalseRelease = 50, FailedQualified = 5 };
        foreach (var variant in new[] { LearnerVariant.Assumed, LearnerVariant.Stuck })
        {
            var r = Simulator.Run(model, new SimulationOptions { Session = SessionOptions.FromProject(project.Settings, 2), Learners = 120, Seed = 2, Variant = variant, Cost = cost });
            double teaching = r.MeanTeachingItems * r.Learners, testing = r.MeanTestItems * r.Learners;
            var paid = (teaching * 0.1) + (testing * 0.2) + ((teaching + testing) * 0.5 * 0.3);
            var mistakes = ((r.Released - r.QualifiedReleases) * 50.0) + (r.FailedQualified * 5.0);
            Assert.True(r.QualifiedReleases > 0);
            Assert.Equal((paid + mistakes) / r.QualifiedReleases, r.CostPerQualifiedRelease, 9);
            Assert.Equal((teaching + testing) / r.QualifiedReleases, r.ItemsPerQualifiedRelease, 9);
            Assert.Equal(r.QualifiedReleases, (int)Math.Round(r.ReleasePrecision * r.Released));
        }
    }

    [Fact]
    public void Cost_settings_out_of_range_are_refused_naming_the_field()
    {
        var s = ProjectSamples.Settings() with { Cost = new CostSettings { FalseRelease = double.NaN, SecondsPerItem = 0 } };
        var fields = ProjectValidator.Validate(s, ProjectSamples.Items()).Select(p => p.Field ?? "").ToArray();
        Assert.Equal(["cost.secondsPerItem", "cost.falseRelease"], fields);
    }
}

public class RobustnessCommandTests
{
    [Fact]
    public void The_table_has_a_row_per_project_kind_and_policy_and_does_not_depend_on_scheduling()
    {
        string[] args = ["robustness", CliRun.Seed("weld-seams"), CliRun.Seed("leaf-symptoms"), "--learners", "12", "--seed", "4", "--policies", "random,adaptive", "--kinds", "assumed,exemplar,decision-lists"];
        var (code, output, _) = CliRun.Run(args);
        Assert.Equal(0, code);
        var rows = output.Split('\n').Where(l => l.StartsWith("| weld-seams", StringComparison.Ordinal) || l.StartsWith("| leaf-symptoms", StringComparison.Ordinal)).ToArray();
        Assert.Equal(2 * 3 * 2, rows.Length);
        Assert.Contains(rows, r => r.StartsWith("| leaf-symptoms | decision-lists | adaptive |", StringComparison.Ordinal));
        // Cells run in parallel; the numbers must be the same on every run.
        Assert.Equal(output, CliRun.Run(args).Output);
    }

    [Fact]
    public void A_varied_opening_changes_the_adaptive_sessions_and_stays_reproducible()
    {
        string[] args = ["robustness", CliRun.Seed("weld-seams"), "--learners", "40", "--seed", "4", "--policies", "adaptive", "--kinds", "assumed"];
        var plain = CliRun.Run([.. args, "--opening-variety", "0"]);
        var varied = CliRun.Run(args);
        Assert.Equal(0, varied.Code);
        static string Row(string output) => output.Split('\n').Single(l => l.StartsWith("| weld-seams | assumed | adaptive |", StringComparison.Ordinal));
        Assert.NotEqual(Row(plain.Output), Row(varied.Output));
        // The project's default (gate.openingVariety 3) is what the option's 3 gives.
        Assert.Equal(varied.Output, CliRun.Run([.. args, "--opening-variety", "3"]).Output);
    }

    [Theory]
    [InlineData("--kinds", "clairvoyant")]
    [InlineData("--policies", "greedy-ish")]
    [InlineData("--learners", "-1")]
    [InlineData("--mastery-streak", "21")]
    [InlineData("--mastery-extension", "x")]
    [InlineData("--opening-variety", "-1")]
    [InlineData("--opening-variety", "11")]
    public void Bad_options_exit_2(string option, string value)
    {
        var (code, _, error) = CliRun.Run("robustness", CliRun.Seed("weld-seams"), option, value);
        Assert.Equal(2, code);
        Assert.NotEmpty(error);
    }
}
