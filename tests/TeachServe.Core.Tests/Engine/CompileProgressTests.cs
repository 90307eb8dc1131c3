using TeachServe.Core.Model;

namespace TeachServe.Core.Tests.Engine;

public class CompileProgressTests
{
    /// <summary>Collects reports synchronously, in order (<see cref="Progress{T}"/> would post them to the thread pool).</summary>
    private sealed class Collector : IProgress<CompileProgress>
    {
        public List<CompileProgress> Reports { get; } = [];

        public void Report(CompileProgress value) => Reports.Add(value);
    }

    [Theory]
    [InlineData(2, 3)]
    [InlineData(3, 10)]
    public void Compile_reports_every_step_in_order_with_a_fraction_that_never_falls_and_ends_at_one(int labels, int features)
    {
        var project = CompileEquivalenceTests.RandomProject(51, 120, features, labels);
        var collector = new Collector();
        ModelCompiler.Compile(project, collector);
        var reports = collector.Reports;
        Assert.True(reports.Count >= 8, $"{reports.Count} reports");
        for (var i = 1; i < reports.Count; i++)
        {
            Assert.True(reports[i].Fraction >= reports[i - 1].Fraction, $"{reports[i - 1]} then {reports[i]}");
        }

        Assert.Equal(1.0, reports[^1].Fraction);
        Assert.Equal(CompileSteps.Done, reports[^1].Step);
        var steps = reports.Select(r => r.Step).Distinct().ToList();
        string[] order = ["target fit", CompileSteps.Mistakes, CompileSteps.Greedy, CompileSteps.Cover, CompileSteps.EasyFirst, CompileSteps.Done];
        Assert.Equal(order, steps.Where(order.Contains));
    }

    [Fact]
    public void The_reporter_keeps_a_wall_time_for_every_finished_step()
    {
        var reporter = new CompileProgressReporter(null);
        reporter.Begin("first", CompileSteps.Hypotheses);
        reporter.Begin("second", CompileSteps.Mistakes);
        reporter.End();
        Assert.Equal(["first", "second"], reporter.Timings.Select(t => t.Step));
        Assert.All(reporter.Timings, t => Assert.True(t.Elapsed >= TimeSpan.Zero));
    }
}
