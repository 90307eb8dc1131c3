using Scalar.AspNetCore;
using TeachServe.Server.Annotate;
using TeachServe.Server.Auth;
using TeachServe.Server.Demo;
using TeachServe.Server.Events;
using TeachServe.Server.Experiments;
using TeachServe.Server.Fits;
using TeachServe.Server.Health;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.OwnerConsole;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Releases;
using TeachServe.Server.Sessions;
using TeachServe.Server.Simulations;
using TeachServe.Server.Versions;
using TeachServe.Server.Webhooks;
using TeachServe.Server.Workers;

// Settings files live beside the server; relative data paths still resolve against the working directory.
var builder = WebApplication.CreateBuilder(new WebApplicationOptions { Args = args, ContentRootPath = AppContext.BaseDirectory });
if (builder.Configuration["urls"] is null) builder.WebHost.UseUrls("http://127.0.0.1:5080");

// Configuration, validated before anything listens.
builder.Services.AddOptions<TeachServeOptions>().BindConfiguration(TeachServeOptions.Section).ValidateOnStart();
builder.Services.AddSingleton<Microsoft.Extensions.Options.IValidateOptions<TeachServeOptions>, TeachServeOptionsValidator>();
builder.Services.AddSingleton(TimeProvider.System);
builder.WebHost.ConfigureKestrel(k => k.Limits.MaxRequestBodySize = 8 * 1024 * 1024);

// Cross-cutting: JSON dialect, problem details for every error, keys, rate limits, OpenAPI.
builder.Services.ConfigureHttpJsonOptions(o => Json.Configure(o.SerializerOptions));
builder.Services.Configure<RouteHandlerOptions>(o => o.ThrowOnBadRequest = true);
builder.Services.AddProblemDetails(o => o.CustomizeProblemDetails = c =>
    c.ProblemDetails.Extensions.TryAdd("traceId", c.HttpContext.TraceIdentifier));
builder.Services.AddExceptionHandler<ProblemDetailsExceptionHandler>();
builder.Services.AddAuthentication(KeyAuthenticationHandler.SchemeName)
    .AddScheme<Microsoft.AspNetCore.Authentication.AuthenticationSchemeOptions, KeyAuthenticationHandler>(KeyAuthenticationHandler.SchemeName, null);
builder.Services.AddScoped<KeyResolver>();
builder.Services.AddSingleton<AdminKeyStore>();
builder.Services.AddKeyRateLimits();
builder.Services.AddOpenApi();

// Persistence and start-up work.
builder.Services.AddPersistence();
builder.Services.AddSingleton<StartupState>();
// The single writer starts first: the start-up tasks may already write through it (the demo project's session).
builder.Services.AddSingleton<AnswerCommitLoop>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<AnswerCommitLoop>());
builder.Services.AddSingleton(_ => new StartupBanner(Console.Out));
builder.Services.AddHostedService<StartupTasks>();

// Features.
builder.Services.AddSingleton<ModelVersionCache>();
builder.Services.AddSingleton<VersionCompileQueue>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<VersionCompileQueue>());
builder.Services.AddScoped<IStartupStep>(sp => sp.GetRequiredService<VersionCompileQueue>());
builder.Services.AddScoped<IStartupStep, DemoProject>();
builder.Services.AddSingleton<SessionStateCache>();
builder.Services.AddScoped<AuthenticatedSession>();
builder.Services.AddSingleton(typeof(SqliteRowReader<>));
builder.Services.AddSingleton<SessionEngine>();
builder.Services.AddScoped<AnswerWriter>();
builder.Services.AddSingleton<OutboxSignal>();
builder.Services.AddHttpClient(OutboxDispatcher.HttpClientName);
builder.Services.AddSingleton<OutboxDispatcher>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<OutboxDispatcher>());
builder.Services.AddOptions<SimulationLimits>().BindConfiguration(SimulationLimits.Section);
builder.Services.AddSingleton<SimulationQueue>();
builder.Services.AddHostedService(sp => sp.GetRequiredService<SimulationQueue>());
builder.Services.AddAnnotatePage();
builder.Services.AddOwnerConsole();

var app = builder.Build();

app.UseSecurityHeaders();
app.UseExceptionHandler();
app.UseStatusCodePages();
app.UseAuthentication();
app.UseRateLimiter();
app.UseAntiforgery();

app.MapOpenApi().DisableRateLimiting();
app.MapScalarApiReference().DisableRateLimiting();

var api = app.MapGroup("/api/v1");
api.MapProjects();
api.MapItems();
api.MapVersions();
api.MapSessions();
api.MapReleases();
api.MapEvents();
api.MapWorkers();
api.MapExperiments();
api.MapFits();
api.MapSimulations();
api.MapAnnotateApi();
app.MapHealth();
app.MapPageAssets();
app.MapAnnotatePage();
app.MapOwnerConsole();

app.Run();

/// <summary>Entry point; public so tests can host it with <c>WebApplicationFactory&lt;Program&gt;</c>.</summary>
public partial class Program;
