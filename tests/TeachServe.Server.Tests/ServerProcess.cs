using System.Diagnostics;
using System.Net;
using System.Net.Sockets;

namespace TeachServe.Server.Tests;

/// <summary>The built server as a real process on a free loopback port, so a test can SIGKILL it.</summary>
public sealed class ServerProcess : IDisposable
{
    private readonly Process _process;
    private readonly System.Text.StringBuilder _output = new();

    private ServerProcess(Process process, Uri url)
    {
        _process = process;
        Url = url;
    }

    public Uri Url { get; }
    public string Output { get { lock (_output) return _output.ToString(); } }

    public static async Task<ServerProcess> StartAsync(IReadOnlyDictionary<string, string> settings, int port)
    {
        var server = Launch(settings, port);
        await server.WaitReadyAsync(TimeSpan.FromSeconds(90));
        return server;
    }

    /// <summary>
    /// Starts the server with settings it must refuse and waits (bounded) for it to exit: its exit code and what it
    /// printed, as an operator would see them.
    /// </summary>
    public static async Task<(int ExitCode, string Output)> StartExpectingExitAsync(IReadOnlyDictionary<string, string> settings)
    {
        using var server = Launch(settings, FreePort());
        using var limit = new CancellationTokenSource(TimeSpan.FromSeconds(90));
        await server._process.WaitForExitAsync(limit.Token);
        return (server._process.ExitCode, server.Output);
    }

    private static ServerProcess Launch(IReadOnlyDictionary<string, string> settings, int port)
    {
        var url = new Uri($"http://127.0.0.1:{port}");
        var info = new ProcessStartInfo("dotnet")
        {
            ArgumentList = { Path.Combine(AppContext.BaseDirectory, "TeachServe.Server.dll"), "--urls", url.ToString().TrimEnd('/') },
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        info.Environment["ASPNETCORE_ENVIRONMENT"] = "Production";
        info.Environment["Logging__LogLevel__Default"] = "Warning";
        foreach (var (key, value) in settings) info.Environment[key.Replace(":", "__", StringComparison.Ordinal)] = value;
        var process = Process.Start(info) ?? throw new InvalidOperationException("dotnet did not start.");
        var server = new ServerProcess(process, url);
        process.OutputDataReceived += (_, e) => server.Append(e.Data);
        process.ErrorDataReceived += (_, e) => server.Append(e.Data);
        process.BeginOutputReadLine();
        process.BeginErrorReadLine();
        return server;
    }

    private void Append(string? line)
    {
        if (line is null) return;
        lock (_output) _output.AppendLine(line);
    }

    /// <summary>Bounded polling of /readyz.</summary>
    private async Task WaitReadyAsync(TimeSpan limit)
    {
        using var http = new HttpClient { BaseAddress = Url, Timeout = TimeSpan.FromSeconds(5) };
        var deadline = Stopwatch.GetTimestamp() + (long)(limit.TotalSeconds * Stopwatch.Frequency);
        while (Stopwatch.GetTimestamp() < deadline)
        {
            if (_process.HasExited) throw new InvalidOperationException($"The server exited with {_process.ExitCode}:\n{Output}");
            try
            {
                using var response = await http.GetAsync("/readyz");
                if (response.StatusCode == HttpStatusCode.OK) return;
            }
            catch (HttpRequestException)
            {
            }
            catch (TaskCanceledException)
            {
            }
            await Task.Delay(100);
        }
        throw new TimeoutException($"The server was not ready within {limit}:\n{Output}");
    }

    /// <summary>SIGKILL: no shutdown hooks, no flush; only what was committed survives.</summary>
    public void Kill()
    {
        _process.Kill(entireProcessTree: true);
        _process.WaitForExit(30_000);
    }

    /// <summary>Kills the server and returns everything it printed (the streams read to their end).</summary>
    public async Task<string> KillAndReadOutputAsync()
    {
        _process.Kill(entireProcessTree: true);
        using var limit = new CancellationTokenSource(TimeSpan.FromSeconds(30));
        await _process.WaitForExitAsync(limit.Token);
        return Output;
    }

    public static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    public void Dispose()
    {
        if (!_process.HasExited) Kill();
        _process.Dispose();
    }
}
