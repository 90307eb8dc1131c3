using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Projects;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Demo;

/// <summary>
/// On first start, loads the <c>leaf-symptoms</c> seed project (a low-stakes scenario: telling drawn houseplant
/// leaves apart), compiles it, starts one demo session and puts
/// the keys and the annotator link in the start-up banner. Later starts only say that it is there.
/// </summary>
public sealed partial class DemoProject(
    IOptions<TeachServeOptions> options, IConfiguration configuration,
    ProjectOperations projects, ItemOperations items, VersionOperations versions, SessionOperations sessions,
    ILogger<DemoProject> logger) : IStartupStep
{
    public const string Setting = "demo-project";
    public const string FolderName = "leaf-symptoms";
    public const string DemoWorker = "demo-annotator";

    public async Task RunAsync(TeachServeDb db, StartupBanner banner, CancellationToken ct)
    {
        var o = options.Value;
        var baseUrl = BaseUrl(o);
        banner.Add("API reference", $"{baseUrl}/reference  (OpenAPI: {baseUrl}/openapi/v1.json)");
        if (!o.LoadDemo) return;
        if (await db.ServerSettings.FirstOrDefaultAsync(s => s.Key == Setting, ct) is { } existing)
        {
            banner.Add("Demo project", $"{existing.Value}  (its keys were shown on first start; delete ./data to start over)");
            return;
        }
        var folder = FindFolder(o);
        if (folder is null)
        {
            banner.Add("Demo project", $"not loaded: no seed-projects/{FolderName} folder found (set TeachServe:DemoProjectDirectory)");
            return;
        }
        if (!ProjectFolder.TryLoad(folder, out var definition, out var problems))
        {
            LogDemoInvalid(logger, folder, string.Join("; ", problems.Take(5)));
            banner.Add("Demo project", $"not loaded: {folder} has {problems.Count} problem(s), see the log");
            return;
        }

        var (project, keys) = await projects.CreateAsync(new ProjectDocument(definition.Settings, null), ct);
        var stored = await items.StoreAsync(project.Id, definition.Settings, definition.Items, ct);
        var compiled = stored.Succeeded ? await versions.CompileNowAsync(project, ct) : stored.Problem;
        db.ServerSettings.Add(new ServerSetting { Key = Setting, Value = project.Id });
        await db.SaveChangesAsync(ct);
        if (!compiled.Succeeded)
        {
            banner.Add("Demo project", $"{project.Id}: not ready: {compiled.Problem.ProblemDetails.Detail}");
            return;
        }
        // The demo link is read from the console later than a platform would hand one out: give it the token's lifetime.
        var start = await sessions.StartAsync(new StartSessionInput(project.Id, DemoWorker, baseUrl, ProjectKnown: true, o.SessionIdleTimeout), ct);
        if (start.Value is not { Session: var session })
        {
            banner.Add("Demo project", $"{project.Id}: no demo session: {start.Refusal?.Detail}");
            return;
        }

        banner.Add("Demo project", $"{project.Id}  ({definition.Settings.Name}, {definition.Items.Count} items, model version {compiled.Value.Number})");
        banner.Add("Owner key", $"{keys.OwnerKey}   (shown once)");
        banner.Add("Embed key", $"{keys.EmbedKey}   (shown once)");
        banner.Add("Demo session", session.SessionId);
        // The project was created just now, so this session is new and comes with its token and link.
        banner.Add("Session token", session.Token ?? "(none)");
        banner.Add("Annotator link", session.LaunchUrl ?? "(none)");
        banner.Add("Owner console", $"{baseUrl}/console   (sign in with the owner key)");
    }

    private string BaseUrl(TeachServeOptions o) =>
        (o.PublicBaseUrl ?? configuration["urls"]?.Split(';')[0] ?? "http://127.0.0.1:5080").TrimEnd('/');

    private static string? FindFolder(TeachServeOptions o)
    {
        if (o.DemoProjectDirectory is { } configured) return Directory.Exists(configured) ? configured : null;
        var shipped = Path.Combine(AppContext.BaseDirectory, "seed-projects", FolderName);
        if (Directory.Exists(shipped)) return shipped;
        for (var dir = new DirectoryInfo(Directory.GetCurrentDirectory()); dir is not null; dir = dir.Parent)
        {
            var candidate = Path.Combine(dir.FullName, "seed-projects", FolderName);
            if (Directory.Exists(candidate)) return candidate;
        }
        return null;
    }

    [LoggerMessage(Level = LogLevel.Warning, Message = "The demo project in {Folder} does not load: {Problems}")]
    private static partial void LogDemoInvalid(ILogger logger, string folder, string problems);
}
