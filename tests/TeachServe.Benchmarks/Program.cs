using BenchmarkDotNet.Running;
using TeachServe.Benchmarks;

if (args.Length > 0 && args[0] == "--compile")
{
    QuickCheck.Compile(args.Length > 1 ? args[1] : BenchCases.Small, Console.Out);
    return;
}

if (args.Length > 0 && args[0] == "--profile")
{
    QuickCheck.Profile(args.Length > 1 ? args[1] : ProjectCases.Digits, args.Length > 2 && args[2] == "reference", Console.Out);
    return;
}

if (args.Length > 0 && args[0] == "--breakdown")
{
    StepBreakdown.Run(args.Length > 1 ? args[1] : BenchCases.Small, args.Length > 2 ? int.Parse(args[2], System.Globalization.CultureInfo.InvariantCulture) : 30, Console.Out);
    return;
}

if (args.Length > 0 && args[0] == "--quick")
{
    QuickCheck.Run(args.Length > 1 ? args[1] : BenchCases.Small, Console.Out);
    return;
}

var summaries = BenchmarkSwitcher.FromAssembly(typeof(Program).Assembly).Run(args).ToArray();
RatioTable.Print(summaries, Console.Out);
