using System.Net;
using System.Net.Sockets;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.AspNetCore.TestHost;
using Microsoft.Data.Sqlite;
using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Browser.Tests;

/// <summary>
/// The real server on a loopback port (Kestrel, not the in-memory test server, so a browser can reach it), with its
/// own SQLite file and the demo project loaded exactly as on a newcomer's first start.
/// </summary>
public sealed class BrowserServer : WebApplicationFactory<Program>
{
    public const string AdminKey = "tsa.browser-tests-admin-key-0123456789";
    private readonly string _dataDirectory = Path.Combine(Path.GetTempPath(), "teachserve-browser-tests", Guid.NewGuid().ToString("N"));
    private readonly int _port = FreePort();
    private readonly IReadOnlyList<string> _frameAncestors;

    public BrowserServer(IReadOnlyList<string>? frameAncestors = null)
    {
        _frameAncestors = frameAncestors ?? [];
        UseKestrel(o => o.Listen(IPAddress.Loopback, _port));
        StartServer();
    }

    public string BaseUrl => $"http://127.0.0.1:{_port}";
    public StringWriter Banner { get; } = new();

    /// <summary>A value printed in the start-up banner, e.g. "Annotator link".</summary>
    public string BannerLine(string name) =>
        Banner.ToString().Split('\n').Select(l => l.Trim()).First(l => l.StartsWith(name + " ", StringComparison.Ordinal))[name.Length..]
            .Trim().Split(' ')[0];

    protected override void ConfigureWebHost(IWebHostBuilder builder)
    {
        builder.UseEnvironment("Testing");
        var config = new Dictionary<string, string?>
        {
            ["TeachServe:DataDirectory"] = _dataDirectory,
            ["TeachServe:AdminKey"] = AdminKey,
            ["TeachServe:LoadDemo"] = "true",
            ["TeachServe:PublicBaseUrl"] = BaseUrl,
            ["TeachServe:PrintStartupBanner"] = "true",
            ["Logging:LogLevel:Default"] = "Warning",
        };
        for (var i = 0; i < _frameAncestors.Count; i++) config[$"TeachServe:Annotate:FrameAncestors:{i}"] = _frameAncestors[i];
        builder.ConfigureAppConfiguration(c => c.AddInMemoryCollection(config));
        builder.ConfigureTestServices(s => s.AddSingleton(new StartupBanner(Banner)));
    }

    protected override void Dispose(bool disposing)
    {
        base.Dispose(disposing);
        if (!disposing) return;
        SqliteConnection.ClearAllPools();
        try { Directory.Delete(_dataDirectory, recursive: true); } catch (IOException) { }
    }

    public static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }
}
