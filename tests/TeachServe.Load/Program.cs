using TeachServe.Load;

LoadOptions options;
try
{
    options = LoadOptions.Parse(args);
}
catch (Exception e) when (e is ArgumentException or FormatException or UriFormatException)
{
    Console.Error.WriteLine(e.Message);
    Console.Error.WriteLine(LoadOptions.Usage);
    return 2;
}

using var stop = new CancellationTokenSource();
Console.CancelKeyPress += (_, e) => { e.Cancel = true; stop.Cancel(); };
using var runner = new LoadRunner(options, options.Json ? TextWriter.Null : Console.Error);
var report = await runner.RunAsync(stop.Token);
Console.WriteLine(options.Json ? report.ToJson() : report.ToTable());
return report.ErrorCount == 0 ? 0 : 1;
