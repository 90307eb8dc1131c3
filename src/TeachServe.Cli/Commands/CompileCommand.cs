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

        var project = ProjectFolder.Load(options.Positional[0]);
        var model = ModelCompiler.Compile(project);
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
        output.WriteLine($"teaching dimension {s.TeachingDimensionEstimate} (greedy cover estimate; unteachable prior mass {s.UnteachablePriorMass:G3})");
        output.WriteLine($"alpha / q          {s.Alpha} / {s.Q:F6}");
        output.WriteLine($"compile time       {s.CompileMilliseconds:F0} ms");
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

        return 0;
    }
}
