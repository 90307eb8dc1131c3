using TeachServe.Server.Annotate;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Demo;
using TeachServe.Server.Events;
using TeachServe.Server.Experiments;
using TeachServe.Server.Exposure;
using TeachServe.Server.Fits;
using TeachServe.Server.Health;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.LiveQuality;
using TeachServe.Server.Media;
using Microsoft.Extensions.Options;
using TeachServe.Server.OwnerConsole;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Releases;
using TeachServe.Server.Sessions;
using TeachServe.Server.Sessions.Store;
using TeachServe.Server.Simulations;
using TeachServe.Server.Versions;
using TeachServe.Server.Webhooks;
using TeachServe.Server.Workers;

// Settings files live beside the server; relative data paths still resolve against the working directory.
var builder = WebApplication.CreateBuilder(new WebApplicationOptions { Args = args, ContentRootPath = AppContext.BaseDirectory });
if (builder.Configuration["urls"] is null) builder.WebHost.UseUrls("http://127.0.0.1:5080");

// Data protection warns "No XML encryptor configured" when it creates the console's first key; the banner says where
// those keys live instead, and SECURITY.md why (the key ring sits in the database beside what it protects).
builder.Logging.AddFilter("Microsoft.AspNetCore.DataProtection.KeyManagement.XmlKeyManager", LogLevel.Error);

// Configuration, validated before anything listens.
builder.Services.AddOptions<TeachServeOptions>().BindConfiguration(TeachServeOptions.Section).ValidateOnStart();
builder.Services.AddSingleton<Microsoft.Extensions.Options.IValidateOptions<TeachServeOptions>, TeachServeOptionsValidator>();
builder.Services.AddSingleton(TimeProvider.System);
builder.WebHost.ConfigureKestrel(k => k.Limits.MaxRequestBodySize = 8 * 1024 * 1024);

// Persistence and start-up work, registered before anything else that starts with the host: hosted services start in
// this order, and authentication's data protection reads its key ring from the database, which must be migrated first.
builder.Services.AddPersistence();
builder.Services.AddSingleton<StartupState>();
builder.Services.AddSingleton<ReadinessProbe>();
// The single writer starts first: the start-up tasks may already write through it (the demo project's session).
builder.Services.AddSingleton<GroupCommitWriter>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<GroupCommitWriter>());
builder.Services.AddSingleton(_ => new StartupBanner(Console.Out));
builder.Services.AddHostedService<StartupTasks>();

// Cross-cutting: JSON dialect, problem details for every error, keys, rate limits, OpenAPI.
builder.Services.ConfigureHttpJsonOptions(o => Json.Configure(o.SerializerOptions));
builder.Services.Configure<RouteHandlerOptions>(o => o.ThrowOnBadRequest = true);
builder.Services.AddProblemDetails(o => o.CustomizeProblemDetails = c =>
{
    c.ProblemDetails.Extensions.TryAdd("traceId", c.HttpContext.TraceIdentifier);
    // A last guard: no problem names the server's .NET types, whatever wrote it.
    c.ProblemDetails.Detail = ProblemText.Scrub(c.ProblemDetails.Detail);
});
builder.Services.AddExceptionHandler<ProblemDetailsExceptionHandler>();
builder.Services.AddAuthentication(KeyAuthenticationHandler.SchemeName)
    .AddScheme<Microsoft.AspNetCore.Authentication.AuthenticationSchemeOptions, KeyAuthenticationHandler>(KeyAuthenticationHandler.SchemeName, null);
builder.Services.AddScoped<KeyResolver>();
builder.Services.AddSingleton<AdminKeyStore>();
builder.Services.AddKnownProxies();
builder.Services.AddSingleton<AuditSubjects>();
builder.Services.AddKeyRateLimits();
builder.Services.AddApiContract();
builder.Services.AddOpenApiDocumentCache();

// Features.
builder.Services.AddScoped<ProjectOperations>();
builder.Services.AddScoped<ItemOperations>();
builder.Services.AddScoped<VersionOperations>();
builder.Services.AddScoped<EventOperations>();
builder.Services.AddSingleton<ModelVersionCache>();
builder.Services.AddSingleton<CompileSlots>();
builder.Services.AddSingleton<TextEmbeddings>();
builder.Services.AddSingleton<VersionCompileQueue>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<VersionCompileQueue>());
builder.Services.AddScoped<IStartupStep>(sp => sp.GetRequiredService<VersionCompileQueue>());
builder.Services.AddScoped<IStartupStep, DemoProject>();
builder.Services.AddSingleton<SessionStateCache>();
builder.Services.AddSingleton(sp => SessionReads.For(sp.GetRequiredService<IOptions<TeachServeOptions>>().Value, sp.GetRequiredService<IServiceScopeFactory>()));
builder.Services.AddSingleton<SessionLoader>();
builder.Services.AddScoped<SessionOperations>();
builder.Services.AddSingleton<OutboxSignal>();
builder.Services.AddSingleton<WebhookSecrets>();
builder.Services.AddScoped<IStartupStep, WebhookSecretsAtRest>();
// Outgoing HTTP to owners' addresses goes through the network guard (no loopback or private networks unless allowed).
builder.Services.AddHttpClient(OutboxDispatcher.HttpClientName).ConfigurePrimaryHttpMessageHandler(sp =>
{
    var hooks = sp.GetRequiredService<IOptions<TeachServeOptions>>().Value.Webhooks;
    return NetworkGuard.Handler(hooks.AllowPrivateNetworks, hooks.ConnectTimeout);
});
builder.Services.AddHttpClient(MediaFetcher.HttpClientName, c => c.Timeout = Timeout.InfiniteTimeSpan).ConfigurePrimaryHttpMessageHandler(sp =>
{
    var media = sp.GetRequiredService<IOptions<TeachServeOptions>>().Value.Media;
    return NetworkGuard.Handler(media.AllowPrivateNetworks, media.ConnectTimeout);
});
builder.Services.AddSingleton<MediaFetcher>();
builder.Services.AddSingleton<OutboxDispatcher>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<OutboxDispatcher>());
builder.Services.AddOptions<SimulationLimits>().BindConfiguration(SimulationLimits.Section);
builder.Services.AddSingleton<SimulationQueue>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<SimulationQueue>());
builder.Services.AddScoped<ExperimentOperations>();
builder.Services.AddScoped<FitOperations>();
builder.Services.AddScoped<SimulationOperations>();
builder.Services.AddScoped<ReleaseOperations>();
builder.Services.AddScoped<WorkerOperations>();
builder.Services.AddScoped<ExposureOperations>();
builder.Services.AddScoped<MediaOperations>();
builder.Services.AddSingleton<LiveMonitors>();
builder.Services.AddSingleton<LiveCheckWriter>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<LiveCheckWriter>());
builder.Services.AddScoped<LiveQualityOperations>();
builder.Services.AddScoped<ForgettingFitOperations>();
builder.Services.AddScoped<Refreshers>();
builder.Services.AddAnnotatePage();
builder.Services.AddOwnerConsole();

var app = builder.Build();

app.UseKnownProxies();
app.UseSecurityHeaders();
app.UseExceptionHandler();
app.UseStatusCodePages();
app.UseAuthentication();
app.UseRateLimiter();
// After rate limiting and before any endpoint binds a body: a request without a valid key ends here with 401.
app.UseKeyAccess();
app.UseOutputCache();
app.UseAntiforgery();

app.MapOpenApi().CacheOutput(OpenApiDocumentCache.PolicyName);
// The API reference is our own page over the OpenAPI document: it works offline and loads nothing from elsewhere.
app.MapGet("/reference", () => Results.Content(PageAssets.Page("reference.html"), "text/html; charset=utf-8"))
    .ExcludeFromDescription().DisableRateLimiting();
app.MapLandingPage();

var api = app.MapGroup("/api/v1");
api.MapProjects();
api.MapProjectKeys();
api.MapItems();
api.MapVersions();
api.MapSessions();
api.MapTestExposure();
api.MapReleases();
api.MapLiveQuality();
api.MapEvents();
api.MapWorkers();
api.MapExperiments();
api.MapFits();
api.MapSimulations();
api.MapAnnotateApi();
api.MapMedia();
app.MapHealth();
app.MapPageAssets();
app.MapAnnotatePage();
app.MapOwnerConsole();

app.Run();

/// <summary>Entry point; public so tests can host it with <c>WebApplicationFactory&lt;Program&gt;</c>.</summary>
public partial class Program;
