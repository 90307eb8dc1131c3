using System.Text.Json;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Tests.Projects;
using TeachServe.Plots;

namespace TeachServe.Core.Tests.Cli;

public class ComparePlotTests
{
    [Fact]
    public void Compare_files_are_the_shared_learning_curve_figure_of_the_printed_results()
    {
        using var dir = new TempDirectory();
        var seed = CliRun.Seed("ticket-triage");
        var (code, output, error) = CliRun.Run("simulate", seed, "--compare", "random,adaptive,cover", "--learners", "20", "--seed", "4", "--json", "--out", dir.Path);
        Assert.Equal((0, ""), (code, error));

        // The figure reads the policy, the kind, the learners and the curve of each result; the rest stays 0 here.
        using var json = JsonDocument.Parse(output);
        var results = json.RootElement.EnumerateArray().Select(r => new SimulationResult
        {
            Policy = r.GetProperty("policy").GetString()!,
            Variant = Enum.GetValues<LearnerVariant>().Single(k => LearnerKinds.Name(k) == r.GetProperty("variant").GetString()),
            Learners = r.GetProperty("learners").GetInt32(),
            Curve = [.. r.GetProperty("curve").EnumerateArray().Select(p => new CurvePoint(
                p.GetProperty("step").GetInt32(), p.GetProperty("meanTrueError").GetDouble(), p.GetProperty("low").GetDouble(), p.GetProperty("high").GetDouble()))],
            Released = 0, ReleasePrecision = 0, Unqualified = 0, UnqualifiedReleased = 0, MeanTeachingItems = 0, MeanTestItems = 0,
            MeanTeachingItemsToRelease = 0, MeanFinalTrueError = 0,
        }).ToList();
        Assert.Equal(["random", "adaptive", "cover"], results.Select(r => r.Policy));

        var settings = ProjectFolder.Load(seed).Settings;
        var figure = SimulationCurves.Draw(results, settings.Name, settings.Gate.TargetError);
        // The server's simulations API serves this same figure for the same results (Server.Tests check that side).
        Assert.Equal(PlotOutput.Svg(figure, PlotSize.Report), File.ReadAllText(Path.Combine(dir.Path, "compare.svg")));
        Assert.Equal(PlotOutput.Png(figure, PlotSize.Report), File.ReadAllBytes(Path.Combine(dir.Path, "compare.png")));
    }
}
