using System.Text.Json;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;

namespace TeachServe.Cli.Commands;

/// <summary><c>teachserve compile DIR [--json]</c>: compiles a project folder and prints the version summary.</summary>
internal static class CompileCommand
{
    public const string Usage = "teachserve compile DIR [--json]";

    public static int Run(string[] args, TextWriter output, TextWriter error)
    {
        var options = CliArguments.Parse(args, flags: ["--json"], values: []);
        if (options is null || options.Positional.Count != 1)
        {
            error.WriteLine($"usage: {Usage}");
            return 2;
        }

        var project = ProjectLoader.Load(options.Positional[0]);
        if (ProjectValidator.TestPool(project.Settings, project.Items, ProjectSources.Folder) is { } pool)
        {
            error.WriteLine($"{pool.File}: {pool.Message}");
            return 2;
        }

        // Progress only on an interactive terminal: redirected stderr (logs, tests, pipes) stays clean.
        var terminal = ReferenceEquals(error, Console.Error) && !Console.IsErrorRedirected ? new TerminalProgress(error) : null;
        var model = ModelCompiler.Compile(project, terminal);
        terminal?.Finish();
        if (options.Has("--json"))
        {
            output.WriteLine(JsonSerializer.Serialize(model.Summary, CliJson.Options));
            return 0;
        }

        var s = model.Summary;
        output.WriteLine($"project            {project.Settings.Name}");
        output.WriteLine($"family             {s.Family}");
        output.WriteLine($"labels             {s.Labels} ({string.Join(", ", project.Settings.Labels)})");
        output.WriteLine($"items              {s.TeachItems} teach, {s.TestItems} test");
        output.WriteLine($"hypotheses         {s.Hypotheses} distinct of {s.HypothesesGenerated} generated");
        output.WriteLine($"target prior       {s.TargetPrior:G4}");
        output.WriteLine($"prior exp. error   {s.PriorExpectedError:F4}");
        output.WriteLine($"near target        {s.PriorMassNearTarget:P1} of the prior on rules other than the truth with error <= {s.NearTargetErrorLimit:F2}");
        output.WriteLine($"teaching dimension {s.TeachingDimensionEstimate} (greedy cover estimate; unteachable prior mass {s.UnteachablePriorMass:G3})");
        output.WriteLine($"alpha / q          {s.Alpha} / {s.Q:F6}");
        output.WriteLine($"compile time       {s.CompileMilliseconds:F0} ms");
        output.WriteLine($"memory             {s.MemoryBytes / 1048576.0:F1} MiB");
        if (s.Vectors is { } v)
            output.WriteLine($"vectors            {v.Length} numbers{(v.Model is null ? "" : $" from {v.Model}")}, reduced to {v.Dimensions} components ({v.ExplainedVariance:P0} of the variance)");
        output.WriteLine("error histogram");
        var max = Math.Max(1, s.ErrorHistogram.Max());
        for (var i = 0; i < s.ErrorHistogram.Count; i++)
        {
            if (s.ErrorHistogram[i] == 0)
            {
                continue;
            }

            var low = i * s.ErrorHistogramBinWidth;
            output.WriteLine($"  {low,4:F2}-{low + s.ErrorHistogramBinWidth,4:F2} {s.ErrorHistogram[i],7} {new string('#', (int)Math.Ceiling(40.0 * s.ErrorHistogram[i] / max))}");
        }

        if (s.Gate is { } g)
        {
            output.WriteLine($"test               {g.Mode}, at most {g.MaxItems} items per attempt, {g.Attempts} attempt(s); answer error {g.AnswerErrorAtTarget:F4} (target) vs {g.AnswerErrorAtLimit:F4} (target + delta)");
            output.WriteLine($"exact rates        P(attempt fails | target) {g.AttemptAlpha:F4}, P(attempt releases | target + delta) {g.AttemptBeta:F4}");
            output.WriteLine("operating characteristic (rule error: release per attempt, over all attempts; expected test items per attempt, over all)");
            foreach (var p in g.OperatingCharacteristic)
            {
                output.WriteLine($"  {p.RuleError,5:F3}  {p.AttemptRelease,6:F3} {p.Release,6:F3}  {p.AttemptItems,6:F1} {p.Items,6:F1}");
            }

            foreach (var w in g.Warnings)
            {
                output.WriteLine($"warning            {w}");
            }
        }

        return 0;
    }
}

/// <summary>One rewritten line on a terminal: the compile step under way and the percent done.</summary>
internal sealed class TerminalProgress(TextWriter writer) : IProgress<CompileProgress>
{
    private int _lastPercent = -1;
    private string _lastStep = string.Empty;

    public void Report(CompileProgress value)
    {
        var percent = (int)Math.Floor(value.Fraction * 100);
        if (percent == _lastPercent && value.Step == _lastStep)
        {
            return;
        }

        _lastPercent = percent;
        _lastStep = value.Step;
        writer.Write($"\rcompiling {percent,3}% {value.Step,-28}");
        writer.Flush();
    }

    public void Finish()
    {
        writer.Write("\r" + new string(' ', 45) + "\r");
        writer.Flush();
    }
}
