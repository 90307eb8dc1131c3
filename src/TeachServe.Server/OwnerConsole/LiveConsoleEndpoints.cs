using System.Globalization;
using System.Text;
using Microsoft.AspNetCore.Antiforgery;
using TeachServe.Core.Csv;
using TeachServe.Plots;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.LiveQuality;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// The console's live-quality routes: the table of released annotators' live checks by status, its CSV, and one
/// annotator's live view with its picture. Signed in with the owner key, like every console page.
/// </summary>
public static class LiveConsoleEndpoints
{
    public const string Path = "/live";

    public static RouteGroupBuilder MapLiveConsole(this RouteGroupBuilder console)
    {
        console.MapGet(Path, Table);
        console.MapGet(Path + ".csv", ExportCsv);
        console.MapGet(Path + "/{workerRef}", Annotator);
        console.MapGet(Path + "/{workerRef}/error.svg", ErrorPlot);
        return console;
    }

    /// <summary>
    /// The link to an annotator's live view. The worker ref is escaped twice: the server decodes a path before routing
    /// except for "%2F", so a ref escaped once would reach the route with its slashes still escaped and could not be
    /// told from a ref holding "%2F" itself. Escaped twice, the path holds no "%2F", the server's decoding gives back the
    /// ref escaped once, and <see cref="WorkerRef"/> decodes that. A ref of dots alone is escaped too, or a browser would
    /// read it as "this folder" or "the one above".
    /// </summary>
    public static string AnnotatorUrl(string workerRef)
    {
        var once = Uri.EscapeDataString(workerRef);
        if (once.All(c => c == '.')) once = once.Replace(".", "%2E", StringComparison.Ordinal);
        return $"{ConsoleAuth.Path}{Path}/{Uri.EscapeDataString(once)}";
    }

    public static async Task<IResult> Table(HttpContext http, TeachServeDb db, IAntiforgery forms, Refreshers refreshers, TimeProvider time, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        var table = await LiveConsoleReads.TableAsync(db, refreshers, project.Id, http.Request.Query["status"], PageNumber(http), ct);
        var refresherRows = await LiveConsoleReads.RefreshersAsync(db, project.Id, ct);
        var model = new LiveQualityModel(project.Id, project.Name, ConsoleEndpoints.Token(http, forms), time.GetUtcNow(), table, refresherRows);
        return ConsoleEndpoints.Render<LiveQualityPage, LiveQualityModel>(http, model, StatusCodes.Status200OK);
    }

    public static async Task<IResult> Annotator(
        string workerRef, HttpContext http, TeachServeDb db, IAntiforgery forms, LiveQualityOperations live, ModelVersionCache versions,
        LiveMonitors monitors, TimeProvider time, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        var worker = WorkerRef(workerRef);
        var detail = await LiveConsoleReads.DetailAsync(db, live, versions, monitors, project.Id, worker, PageNumber(http), ct);
        if (!detail.Succeeded) return Results.Redirect(ConsoleAuth.Path + Path);
        var model = new LiveAnnotatorModel(project.Name, ConsoleEndpoints.Token(http, forms), time.GetUtcNow(), detail.Value);
        return ConsoleEndpoints.Render<LiveAnnotatorPage, LiveAnnotatorModel>(http, model, StatusCodes.Status200OK);
    }

    public static async Task<IResult> ErrorPlot(
        string workerRef, HttpContext http, TeachServeDb db, LiveQualityOperations live, ModelVersionCache versions, LiveMonitors monitors, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Unauthorized();
        var detail = await LiveConsoleReads.DetailAsync(db, live, versions, monitors, project.Id, WorkerRef(workerRef), 1, ct);
        if (!detail.Succeeded) return detail.Problem;
        var phone = http.Request.Query["size"] == "phone";
        var plot = LivePlots.LiveError(detail.Value.Points, detail.Value.TargetAnswerError, phone);
        http.Response.Headers.CacheControl = "no-store";
        http.Response.Headers.ContentSecurityPolicy = "default-src 'none'; style-src 'unsafe-inline'";
        http.Response.Headers.XContentTypeOptions = "nosniff";
        return Results.Text(PlotOutput.Svg(plot, phone ? LivePlots.Phone : PlotSize.Console), "image/svg+xml; charset=utf-8");
    }

    public static readonly string[] CsvColumns =
    [
        "workerRef", "status", "checks", "errors", "liveError", "liveErrorLow", "liveErrorHigh", "alarms", "lastAlarmAt",
        "lastAlarm", "modelVersion", "sessionId", "startedAt", "lastAnsweredAt",
    ];

    /// <summary>Every monitored annotator as CSV (RFC 4180), each cell neutralised so that no worker ref becomes a formula.</summary>
    public static async Task<IResult> ExportCsv(HttpContext http, TeachServeDb db, LiveQualityOperations live, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        var list = await live.ListAsync(project.Id, ct);
        if (!list.Succeeded) return list.Problem;
        var csv = new StringBuilder();
        CsvCells.AppendRow(csv, CsvColumns);
        foreach (var a in list.Value.Annotators)
        {
            CsvCells.AppendRow(csv,
                a.WorkerRef, a.Status, Num(a.Checks), Num(a.Errors), Rate(a.LiveError), Rate(a.LiveErrorLow), Rate(a.LiveErrorHigh), Num(a.Alarms),
                a.LastAlarmAt?.ToString("O", CultureInfo.InvariantCulture) ?? "", a.LastAlarm, Num(a.ModelVersion), a.SessionId,
                a.StartedAt.ToString("O", CultureInfo.InvariantCulture), a.LastAnsweredAt.ToString("O", CultureInfo.InvariantCulture));
        }
        http.Response.Headers.ContentDisposition = $"attachment; filename=\"{project.Id}-live-quality.csv\"";
        return Results.Text(csv.ToString(), "text/csv; charset=utf-8");
    }

    private static string Num(int value) => value.ToString(CultureInfo.InvariantCulture);

    private static string Rate(double? value) => value?.ToString("0.####", CultureInfo.InvariantCulture) ?? "";

    private static int PageNumber(HttpContext http) =>
        int.TryParse(http.Request.Query["page"], NumberStyles.Integer, CultureInfo.InvariantCulture, out var p) ? p : 1;

    /// <summary>The worker ref from its route value, which is the ref escaped once (see <see cref="AnnotatorUrl"/>).</summary>
    private static string WorkerRef(string routed) => Uri.UnescapeDataString(routed);
}
