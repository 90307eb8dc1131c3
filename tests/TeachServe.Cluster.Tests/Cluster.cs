using System.Diagnostics;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Sockets;
using Npgsql;

namespace TeachServe.Cluster.Tests;

/// <summary>
/// Real server processes started by <c>deploy/local-cluster.sh</c> from the server's build output, against a
/// PostgreSQL database of their own; <see cref="DisposeAsync"/> stops them (and what the script started).
/// </summary>
public sealed class Cluster : IAsyncDisposable
{
    public const string AdminKey = "tsa.cluster-test-admin-key-0123456789";
    public const string PostgresVariable = "TEACHSERVE_TEST_POSTGRES";

    private readonly string? _database;

    private Cluster(string directory, int[] ports, int? front, string? database)
    {
        Directory = directory;
        Ports = ports;
        Front = front;
        _database = database;
    }

    public string Directory { get; }
    public int[] Ports { get; }
    public int? Front { get; }

    /// <summary>Nodes on fresh loopback ports; <paramref name="connectionString"/> null means a new database on the test server.</summary>
    public static async Task<Cluster> StartAsync(int nodes, bool front, string? connectionString = null)
    {
        string? database = null;
        if (connectionString is null)
        {
            database = "ts_cluster_" + Guid.NewGuid().ToString("N")[..16];
            await using var admin = new NpgsqlConnection(Server);
            await admin.OpenAsync();
            await using var create = new NpgsqlCommand($"CREATE DATABASE \"{database}\"", admin);
            await create.ExecuteNonQueryAsync();
            connectionString = new NpgsqlConnectionStringBuilder(Server) { Database = database }.ConnectionString;
        }
        var dir = NewDirectory();
        var ports = Enumerable.Range(0, nodes).Select(_ => FreePort()).ToArray();
        int? frontPort = front ? FreePort() : null;
        var cluster = new Cluster(dir, ports, frontPort, database);
        var args = new List<string> { "start", "--dir", dir, "--ports", string.Join(',', ports) };
        // Round-robin, not the default session affinity: the tests want one session's requests to cross nodes.
        if (frontPort is { } f) args.AddRange(["--front", f.ToString(System.Globalization.CultureInfo.InvariantCulture), "--balance", "round-robin"]);
        try
        {
            await Script.RunAsync("local-cluster.sh", args, TimeSpan.FromMinutes(3), new()
            {
                ["TEACHSERVE_DB"] = connectionString,
                ["TEACHSERVE_ADMIN_KEY"] = AdminKey,
                ["TEACHSERVE_SERVER_DLL"] = ServerDll(),
            });
        }
        catch
        {
            await cluster.DisposeAsync();
            throw;
        }
        return cluster;
    }

    public static string Server => Environment.GetEnvironmentVariable(PostgresVariable) is { Length: > 0 } s
        ? s
        : throw new InvalidOperationException(
            $"The cluster tests need PostgreSQL: set {PostgresVariable} to a connection string of a server you may create " +
            "databases on (./test.sh starts a throwaway cluster and sets it).");

    public HttpClient Node(int index, string? key = null) => Client(Ports[index], key);

    public HttpClient FrontClient(string? key = null) => Client(Front ?? throw new InvalidOperationException("No front."), key);

    public static HttpClient Client(int port, string? key)
    {
        var client = new HttpClient { BaseAddress = new Uri($"http://127.0.0.1:{port}"), Timeout = TimeSpan.FromSeconds(30) };
        if (key is not null) client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", key);
        return client;
    }

    /// <summary>Polls until the predicate holds, at most <paramref name="limit"/>.</summary>
    public static async Task WaitUntilAsync(Func<Task<bool>> condition, TimeSpan limit, string what)
    {
        var clock = Stopwatch.StartNew();
        while (!await condition())
        {
            if (clock.Elapsed > limit) throw new TimeoutException($"Gave up after {limit.TotalSeconds} s waiting for {what}.");
            await Task.Delay(200);
        }
    }

    public static async Task<HttpStatusCode?> StatusAsync(HttpClient client, string path)
    {
        try
        {
            using var response = await client.GetAsync(path);
            return response.StatusCode;
        }
        catch (HttpRequestException)
        {
            return null;
        }
    }

    public static string NewDirectory()
    {
        var dir = Path.Combine(Path.GetTempPath(), "teachserve-cluster-tests", Guid.NewGuid().ToString("N"));
        System.IO.Directory.CreateDirectory(dir);
        // PostgreSQL runs as its own user when the tests run as root; it must be able to reach the folder.
        if (!OperatingSystem.IsWindows())
        {
            File.SetUnixFileMode(Path.GetDirectoryName(dir)!, (UnixFileMode)0b111_101_101);
            File.SetUnixFileMode(dir, (UnixFileMode)0b111_101_101);
        }
        return dir;
    }

    public static string RepoRoot()
    {
        for (var d = new DirectoryInfo(AppContext.BaseDirectory); d is not null; d = d.Parent)
            if (File.Exists(Path.Combine(d.FullName, "TeachServe.sln"))) return d.FullName;
        throw new InvalidOperationException("TeachServe.sln not found above the test output.");
    }

    /// <summary>The server built in the same configuration as these tests (bin/Debug or bin/Release).</summary>
    public static string ServerDll()
    {
        var configuration = new DirectoryInfo(AppContext.BaseDirectory).Parent!.Name;
        var dll = Path.Combine(RepoRoot(), "src", "TeachServe.Server", "bin", configuration, "net10.0", "TeachServe.Server.dll");
        return File.Exists(dll) ? dll : throw new InvalidOperationException($"Build the server first: {dll} is missing.");
    }

    private static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    public async ValueTask DisposeAsync()
    {
        try
        {
            await Script.RunAsync("local-cluster.sh", ["stop", "--dir", Directory], TimeSpan.FromMinutes(1), []);
        }
        finally
        {
            if (_database is not null)
            {
                await using var admin = new NpgsqlConnection(Server);
                await admin.OpenAsync();
                await using var drop = new NpgsqlCommand($"DROP DATABASE IF EXISTS \"{_database}\" WITH (FORCE)", admin);
                await drop.ExecuteNonQueryAsync();
            }
            try { System.IO.Directory.Delete(Directory, recursive: true); } catch (IOException) { } catch (UnauthorizedAccessException) { }
        }
    }
}

/// <summary>Runs a script from <c>deploy/</c> with a time limit; a non-zero exit fails with its output.</summary>
public static class Script
{
    public static async Task<string> RunAsync(string name, IEnumerable<string> args, TimeSpan limit, Dictionary<string, string> env)
    {
        var start = new ProcessStartInfo("bash") { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        start.ArgumentList.Add(Path.Combine(Cluster.RepoRoot(), "deploy", name));
        foreach (var a in args) start.ArgumentList.Add(a);
        foreach (var (k, v) in env) start.Environment[k] = v;
        using var process = Process.Start(start)!;
        var stdout = process.StandardOutput.ReadToEndAsync();
        var stderr = process.StandardError.ReadToEndAsync();
        using var timeout = new CancellationTokenSource(limit);
        try
        {
            await process.WaitForExitAsync(timeout.Token);
        }
        catch (OperationCanceledException)
        {
            process.Kill(entireProcessTree: true);
            throw new TimeoutException($"{name} {string.Join(' ', args)} did not finish within {limit}: {await stderr}");
        }
        if (process.ExitCode != 0)
            throw new InvalidOperationException($"{name} {string.Join(' ', args)} exited {process.ExitCode}: {await stderr}{await stdout}");
        return (await stdout).Trim();
    }
}
