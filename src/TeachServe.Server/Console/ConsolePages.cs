using System.Globalization;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Antiforgery;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Plots;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;
using static TeachServe.Server.OwnerConsole.ConsoleHtml;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// The owner console: server-rendered pages over the same code paths as the API (validation, upload, compile,
/// settings patch, event export), signed in with the owner key.
/// </summary>
public static class ConsolePages
{
    public static IServiceCollection AddOwnerConsole(this IServiceCollection services) => services.AddConsoleAuth();

    public static RouteGroupBuilder MapOwnerConsole(this IEndpointRouteBuilder app)
    {
        var console = app.MapGroup(ConsoleAuth.Path).ExcludeFromDescription();
        console.MapGet("/", Onboarding);
        console.MapPost("/sign-in", SignIn).RequireRateLimiting(RateLimiting.CredentialPolicy);
        console.MapPost("/sign-out", SignOut);
        console.MapGet("/project", ProjectPage);
        console.MapPost("/items", Upload);
        console.MapPost("/versions", Compile);
        console.MapPost("/settings", SaveSettings);
        console.MapPost("/keys", ChangeKey);
        console.MapGet("/events.jsonl", ExportEvents);
        console.MapGet("/sessions.csv", ExportSessions);
        console.MapGet("/plots/{name}", Plot);
        return console;
    }

    // ---------- sign-in ----------

    private static IResult SignInPage(HttpContext http, IAntiforgery forms, string? error, int status, string? notice = null)
    {
        var token = forms.GetAndStoreTokens(http).RequestToken!;
        var body = $"""
            <section class="panel sign-in" aria-labelledby="sign-in-heading">
              <h1 id="sign-in-heading">Sign in to your project</h1>
              <p>Paste the project's <strong>owner key</strong> (it starts with <code>tso.</code>). It was shown once when the
                 project was created; the server keeps only its hash.</p>
              {(notice is null ? "" : $"<div id=\"sign-in-notice\">{Message("ok", notice)}</div>")}
              {(error is null ? "" : $"<div id=\"sign-in-error\">{Message("error", error)}</div>")}
              <form method="post" action="/console/sign-in">
                {Token(token)}
                <label for="owner-key">Owner key</label>
                <input id="owner-key" name="ownerKey" type="password" autocomplete="off" spellcheck="false" required
                       {(error is null ? "" : "aria-invalid=\"true\" aria-describedby=\"sign-in-error\"")}>
                <button type="submit" class="primary">Sign in</button>
              </form>
            </section>
            """;
        return Html(http, Layout("Sign in", null, null, token, body), status);
    }

    public static async Task<IResult> SignIn(HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, CancellationToken ct)
    {
        var project = await ConsoleAuth.CheckOwnerKeyAsync(db, form["ownerKey"], ct);
        if (project is null)
            return SignInPage(http, forms, "That key was not accepted. Use the owner key of your project (tso.…), not the admin, embed or session key.",
                StatusCodes.Status401Unauthorized);
        await ConsoleAuth.SignInAsync(http, project);
        return Results.Redirect("/console", permanent: false, preserveMethod: false);
    }

    public static async Task<IResult> SignOut(HttpContext http, IFormCollection form)
    {
        await ConsoleAuth.SignOutAsync(http);
        return Results.Redirect("/console");
    }

    // ---------- onboarding ----------

    public static async Task<IResult> Onboarding(HttpContext http, TeachServeDb db, IAntiforgery forms, TimeProvider time, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, null, StatusCodes.Status200OK);
        var token = forms.GetAndStoreTokens(http).RequestToken!;
        // ?page=N pages the session table (a missing or unreadable number is the first page, one too high the last).
        var page = int.TryParse(http.Request.Query["page"], NumberStyles.Integer, CultureInfo.InvariantCulture, out var p) ? p : 1;
        var stats = await ConsoleStats.ComputeAsync(db, project.Id, ct, page);
        var settings = ProjectsApi.Settings(project);
        var phases = string.Concat(Phases.All.Select(p =>
            $"""<li><span class="phase {p}">{p}</span> <strong>{stats.ByPhase.GetValueOrDefault(p)}</strong></li>"""));
        var ended = stats.Released + stats.Failed;
        var rate = stats.ReleaseRate is { } r
            ? $"{Pct(r)}<small>{stats.Released} of {ended} ended sessions" +
              (stats.ReleaseRateInterval is { } ci && double.IsFinite(ci.Low) ? $"; 95 % interval {Pct(ci.Low)} – {Pct(ci.High)}" : "") + "</small>"
            : "–<small>no session has ended yet</small>";
        var medianItems = stats.MedianItemsToRelease is { } m
            ? $"{N(m, "0.#")}<small>items answered, teaching and test</small>" : "–<small>no release yet</small>";
        var medianTime = stats.MedianTimeToRelease is { } t
            ? $"{Duration(t)}<small>from session start to release</small>" : "–<small>no release yet</small>";

        var body = new StringBuilder();
        body.Append($"""
            <h1>Onboarding <span class="sub">{E(project.Name)}</span></h1>
            <p class="as-of">Figures as of {When(time.GetUtcNow())}. <a href="/console">Refresh</a></p>
            <section class="cards" aria-label="Key figures">
              <div class="card"><h2>Sessions by phase</h2><ul class="phases">{phases}</ul></div>
              <div class="card"><h2>Release rate</h2><p class="figure">{rate}</p></div>
              <div class="card"><h2>Median items to release</h2><p class="figure">{medianItems}</p></div>
              <div class="card"><h2>Median time to release</h2><p class="figure">{medianTime}</p></div>
            </section>
            """);
        body.Append(Pictures(stats, settings));
        body.Append(RecentSessions(stats));
        return Html(http, Layout("Onboarding", project.Name, "onboarding", token, body.ToString()), StatusCodes.Status200OK);
    }

    private static string Pictures(OnboardingStats stats, ProjectSettings settings)
    {
        var calibrationRows = string.Concat(stats.Calibration.Select(p =>
            $"<tr><td>{E(p.WorkerRef)}</td><td>{Pct(p.Predicted)}</td><td>{Pct(p.Observed)}</td><td>{p.TestAnswered}</td></tr>"));
        var curveRows = string.Concat(stats.LearningCurve.Select(c =>
            $"<tr><td>{c.TeachingStep}</td><td>{Pct(c.MeanPredictedError)}</td><td>{c.Sessions}</td></tr>"));
        var histogram = stats.ItemsToRelease.Count == 0 ? "" : string.Concat(
            stats.ItemsToRelease.GroupBy(i => i).OrderBy(g => g.Key).Select(g => $"<tr><td>{g.Key}</td><td>{g.Count()}</td></tr>"));
        string Figure(string name, string caption, string alt, bool empty, string emptyText, string table) => $"""
            <figure class="plot">
              {(empty ? $"<p class=\"empty\">{E(emptyText)}</p>" : $"<img src=\"/console/plots/{name}.svg\" width=\"{ConsolePlots.Width}\" height=\"{ConsolePlots.Height}\" alt=\"{E(alt)}\">")}
              <figcaption>{caption}</figcaption>
              {(empty ? "" : $"<details><summary>The numbers</summary>{table}</details>")}
            </figure>
            """;
        return $"""
            <section aria-labelledby="pictures-heading">
              <h2 id="pictures-heading">Pictures</h2>
              <p class="note">From the {stats.SessionsInPictures} most recent sessions.</p>
              <div class="plots">
              {Figure("calibration", "Each dot is a released annotator: TeachServe's predicted error when teaching ended, against the error on the held-out test. Dots near the dashed line mean the predictions can be trusted.",
                  "Scatter plot of predicted against observed test error for released annotators.", stats.Calibration.Count == 0,
                  "No released annotator yet: the calibration picture appears with the first release.",
                  $"<table><thead><tr><th scope=\"col\">Worker</th><th scope=\"col\">Predicted</th><th scope=\"col\">Observed</th><th scope=\"col\">Test items</th></tr></thead><tbody>{calibrationRows}</tbody></table>")}
              {Figure("learning-curve", $"Mean predicted error after each teaching step, over the sessions that reached that step (those still struggling stay longer, so late steps lean pessimistic). Target: {Pct(settings.Gate.TargetError)}.",
                  "Line chart of mean predicted error by teaching step.", stats.LearningCurve.Count == 0,
                  "No teaching answers yet.",
                  $"<table><thead><tr><th scope=\"col\">Step</th><th scope=\"col\">Mean predicted error</th><th scope=\"col\">Sessions</th></tr></thead><tbody>{curveRows}</tbody></table>")}
              {Figure("items-to-release", "How many items released annotators answered before release (teaching and test together).",
                  "Histogram of items answered until release.", stats.ItemsToRelease.Count == 0,
                  "No release yet.",
                  $"<table><thead><tr><th scope=\"col\">Items</th><th scope=\"col\">Annotators</th></tr></thead><tbody>{histogram}</tbody></table>")}
              </div>
            </section>
            """;
    }

    private static string RecentSessions(OnboardingStats stats)
    {
        if (stats.Recent.Count == 0)
            return """<section aria-labelledby="recent-heading"><h2 id="recent-heading">Recent sessions</h2><p class="empty">No sessions yet. The platform starts one per annotator with the embed key.</p></section>""";
        var rows = string.Concat(stats.Recent.Select(row =>
        {
            var s = row.View;
            var ev = s.Evidence;
            var testError = ev?.TestError is { } te
                ? Pct(te) + (ev.TestErrorInterval is { } ci ? $" <small>({Pct(ci.Low)}–{Pct(ci.High)})</small>" : "")
                : "–";
            return $"""
                <tr>
                  <td>{When(s.CreatedAt)}</td>
                  <td class="worker">{E(s.WorkerRef)}</td>
                  <td><span class="phase {E(s.Phase)}">{E(s.Phase)}</span></td>
                  <td class="num">{s.ModelVersion}</td>
                  <td class="num">{s.ItemsTaught}</td>
                  <td class="num">{s.TestAnswered}{(ev is null ? "" : $" <small>({ev.TestErrors} wrong)</small>")}</td>
                  <td class="num">{testError}</td>
                  <td class="num">{Pct(s.PredictedError)}</td>
                  <td class="num">{Duration(row.Duration)}</td>
                </tr>
                """;
        }));
        var first = (stats.Page - 1) * ConsoleStats.RecentRows + 1;
        var last = first + stats.Recent.Count - 1;
        var pages = (stats.TotalSessions + ConsoleStats.RecentRows - 1) / ConsoleStats.RecentRows;
        var pager = $"""
            <nav class="pager" aria-label="Session pages">
              <span>Sessions {first}–{last} of {stats.TotalSessions}, newest first.</span>
              {(stats.Page > 1 ? $"<a href=\"/console?page={stats.Page - 1}\" rel=\"prev\">Newer</a>" : "")}
              {(stats.Page < pages ? $"<a href=\"/console?page={stats.Page + 1}\" rel=\"next\">Older</a>" : "")}
              <a href="/console/sessions.csv" download>All as CSV</a>
            </nav>
            """;
        return $"""
            <section aria-labelledby="recent-heading">
              <h2 id="recent-heading">Recent sessions</h2>
              {pager}
              <div class="table-wrap" tabindex="0" role="region" aria-labelledby="recent-heading">
              <table class="sessions">
                <thead><tr>
                  <th scope="col">Started</th><th scope="col">Worker</th><th scope="col">Phase</th><th scope="col">Version</th>
                  <th scope="col">Taught</th><th scope="col">Test items</th><th scope="col">Test error (95 %)</th>
                  <th scope="col">Predicted error</th><th scope="col">Took</th>
                </tr></thead>
                <tbody>{rows}</tbody>
              </table>
              </div>
            </section>
            """;
    }

    public static async Task<IResult> Plot(string name, HttpContext http, TeachServeDb db, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Unauthorized();
        if (!ConsolePlots.Names.Contains(name)) return Infrastructure.Problems.NotFound($"No such plot; expected one of {string.Join(", ", ConsolePlots.Names)}.");
        var stats = await ConsoleStats.ComputeAsync(db, project.Id, ct);
        var settings = ProjectsApi.Settings(project);
        var plot = name switch
        {
            "calibration.svg" => ConsolePlots.Calibration(stats.Calibration, settings.Gate.TargetError),
            "learning-curve.svg" => ConsolePlots.LearningCurve(stats.LearningCurve,
                await StartingErrorAsync(db, project.Id, ct) ?? (stats.LearningCurve.Count > 0 ? stats.LearningCurve[0].MeanPredictedError : 1),
                settings.Gate.TargetError),
            _ => ConsolePlots.ItemsToRelease(stats.ItemsToRelease),
        };
        http.Response.Headers.CacheControl = "no-store";
        http.Response.Headers.ContentSecurityPolicy = "default-src 'none'; style-src 'unsafe-inline'";
        http.Response.Headers.XContentTypeOptions = "nosniff";
        return Results.Text(PlotOutput.Svg(plot, PlotSize.Console), "image/svg+xml; charset=utf-8");
    }

    private static async Task<double?> StartingErrorAsync(TeachServeDb db, string projectId, CancellationToken ct)
    {
        var summary = await db.ModelVersions.AsNoTracking()
            .Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready)
            .OrderByDescending(v => v.Number).Select(v => v.SummaryJson).FirstOrDefaultAsync(ct);
        return summary is null ? null : Json.Deserialize<ModelSummary>(summary).PriorExpectedError;
    }

    // ---------- project, items, versions, settings ----------

    public static async Task<IResult> ProjectPage(HttpContext http, TeachServeDb db, IAntiforgery forms, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        return await RenderProjectAsync(http, db, forms, project, null, null, StatusCodes.Status200OK, ct);
    }

    /// <summary>The project page, optionally with the outcome of a form: a message on top and problems beside the form that caused them.</summary>
    private static async Task<IResult> RenderProjectAsync(
        HttpContext http, TeachServeDb db, IAntiforgery forms, Project project, string? message,
        (string Form, string Heading, List<(int? Line, string Field, string Reason)> List)? problems, int status, CancellationToken ct,
        IFormCollection? typed = null)
    {
        var token = forms.GetAndStoreTokens(http).RequestToken!;
        var settings = ProjectsApi.Settings(project);
        string ProblemsFor(string form) => problems is { } p && p.Form == form ? ConsoleHtml.Problems(p.Heading, p.List) : "";

        var counts = await db.Items.AsNoTracking().Where(i => i.ProjectId == project.Id)
            .GroupBy(i => new { i.Pool, i.Label }).Select(g => new { g.Key.Pool, g.Key.Label, Count = g.Count() }).ToListAsync(ct);
        int Count(string pool, string label) => counts.FirstOrDefault(c => c.Pool == pool && c.Label == label)?.Count ?? 0;
        var itemRows = string.Concat(settings.Labels.Select(l =>
            $"<tr><th scope=\"row\">{E(l)}</th><td class=\"num\">{Count(Pools.Teach, l)}</td><td class=\"num\">{Count(Pools.Test, l)}</td></tr>"));
        var teachTotal = counts.Where(c => c.Pool == Pools.Teach).Sum(c => c.Count);
        var testTotal = counts.Where(c => c.Pool == Pools.Test).Sum(c => c.Count);

        var versions = await db.ModelVersions.AsNoTracking().Where(v => v.ProjectId == project.Id)
            .OrderByDescending(v => v.Number).Take(20).ToListAsync(ct);
        var versionRows = string.Concat(versions.Select(VersionRow));

        var body = $"""
            <h1>Project and items <span class="sub">{E(project.Name)}</span></h1>
            {(message is null ? "" : Message(status < 400 ? "ok" : "error", message))}
            <div class="columns">
            <section class="panel" aria-labelledby="items-heading">
              <h2 id="items-heading">Items</h2>
              <table class="counts">
                <thead><tr><th scope="col">Class</th><th scope="col">Teach pool</th><th scope="col">Test pool</th></tr></thead>
                <tbody>{itemRows}</tbody>
                <tfoot><tr><th scope="row">All</th><td class="num">{teachTotal}</td><td class="num">{testTotal}</td></tr></tfoot>
              </table>
              <h3>Event log</h3>
              <p><a href="/console/events.jsonl" download>Download every event as JSON Lines</a> (session starts, answers, releases; for your own analysis).</p>
              <p><a href="/console/sessions.csv" download>Download every session as CSV</a> (one row per annotator: phase, items, test totals, times).</p>
            </section>
            <section class="panel" aria-labelledby="upload-heading">
              <h2 id="upload-heading">Upload items</h2>
              <p class="note">JSON Lines (<code>.jsonl</code>), a JSON array (<code>.json</code>) or CSV (<code>.csv</code>), the same formats and checks as
                 the API. Items are matched by <code>id</code>: new ones are added, changed ones replaced. If any line has a problem, nothing is stored.</p>
              {ProblemsFor("items")}
              <form method="post" action="/console/items" enctype="multipart/form-data" aria-labelledby="upload-heading">
                {Token(token)}
                <label for="items-file">Item file</label>
                <input id="items-file" name="file" type="file" accept=".jsonl,.ndjson,.json,.csv" required>
                <button type="submit" class="primary">Upload</button>
              </form>
            </section>
            </div>
            <section class="panel" aria-labelledby="versions-heading">
              <h2 id="versions-heading">Model versions</h2>
              <p class="note">A model version freezes the items and settings as they are now. New sessions use the newest ready version; running sessions keep theirs.</p>
              {ProblemsFor("versions")}
              <form method="post" action="/console/versions">
                {Token(token)}
                <button type="submit" class="primary">Compile a new model version</button>
              </form>
              {(versions.Count == 0 ? "<p class=\"empty\">No model version yet.</p>" : $"""
                <div class="table-wrap" tabindex="0" role="region" aria-labelledby="versions-heading">
                <table class="versions">
                  <thead><tr><th scope="col">Version</th><th scope="col">Status</th><th scope="col">Items (teach / test)</th>
                  <th scope="col">|H| (distinct of generated)</th><th scope="col">Error histogram of H</th><th scope="col">Teaching dimension (est.)</th>
                  <th scope="col">Prior predicted error</th><th scope="col">Test (exact rates)</th></tr></thead>
                  <tbody>{versionRows}</tbody>
                </table></div>
                """)}
            </section>
            {SettingsForm(settings, token, ProblemsFor("settings"), typed)}
            {KeysPanel(token, ProblemsFor("keys"))}
            """;
        return Html(http, Layout("Project", project.Name, "project", token, body), status);
    }

    private static string KeysPanel(string token, string problems) => $"""
        <section class="panel" aria-labelledby="keys-heading">
          <h2 id="keys-heading">Keys</h2>
          <p class="note">Replacing a key stops the old one at once, on every node, and shows the new one here once. Sessions
             already running keep their own tokens. Every change is recorded in the project's audit log.</p>
          {problems}
          <form method="post" action="/console/keys" class="keys">
            {Token(token)}
            <input type="hidden" name="kind" value="{ProjectKeysApi.EmbedKind}">
            <p><strong>Embed key</strong> (your platform's backend starts sessions with it)</p>
            <button type="submit" name="action" value="rotate">Replace the embed key</button>
            <button type="submit" name="action" value="revoke" class="danger">Revoke the embed key</button>
          </form>
          <form method="post" action="/console/keys" class="keys">
            {Token(token)}
            <input type="hidden" name="kind" value="{ProjectKeysApi.OwnerKind}">
            <p><strong>Owner key</strong> (this console and the owner's API calls)</p>
            <button type="submit" name="action" value="rotate">Replace the owner key and sign in with the new one</button>
          </form>
        </section>
        """;

    public static async Task<IResult> ChangeKey(HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, TimeProvider time, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, "Your console session has ended; sign in again.", StatusCodes.Status401Unauthorized);
        var kind = form["kind"].ToString();
        var action = form["action"].ToString();
        if (kind is not (ProjectKeysApi.OwnerKind or ProjectKeysApi.EmbedKind) || action is not ("rotate" or "revoke")
            || (kind == ProjectKeysApi.OwnerKind && action == "revoke"))
        {
            return await RenderProjectAsync(http, db, forms, project, null,
                ("keys", "Not changed.", [(null, "kind", "choose the embed key (replace or revoke) or the owner key (replace)")]), StatusCodes.Status400BadRequest, ct);
        }

        if (action == "revoke")
        {
            await ProjectKeysApi.RevokeAsync(db, time, project.Id, kind, "console", ct);
            return await RenderProjectAsync(http, db, forms, project,
                "The embed key is revoked: your platform cannot start sessions until you replace it.", null, StatusCodes.Status200OK, ct);
        }
        var rotated = (await ProjectKeysApi.RotateAsync(db, time, project.Id, kind, "console", ct))!;
        if (kind == ProjectKeysApi.EmbedKind)
        {
            return await RenderProjectAsync(http, db, forms, project,
                $"New embed key (shown once; give it to your platform's backend): {rotated.Key}", null, StatusCodes.Status200OK, ct);
        }
        // The console cookie names the old owner key's fingerprint, so this console session has ended too.
        return SignInPage(http, forms, null, StatusCodes.Status200OK,
            notice: $"New owner key (shown once; keep it safe, the server stores only its hash): {rotated.Key}");
    }

    private static string VersionRow(ModelVersionRecord v)
    {
        var summary = v.SummaryJson is null ? null : Json.Deserialize<ModelSummary>(v.SummaryJson);
        var status = v.Status == VersionStatuses.Failed ? $"failed <small>{E(v.Error)}</small>" : E(v.Status);
        if (summary is null)
            return $"<tr><th scope=\"row\">{v.Number}</th><td>{status}</td><td class=\"num\">{v.TeachCount} / {v.TestCount}</td><td colspan=\"5\">–</td></tr>";
        return $"""
            <tr><th scope="row">{v.Number}</th><td>{status}</td><td class="num">{v.TeachCount} / {v.TestCount}</td>
            <td class="num">{summary.Hypotheses} <small>of {summary.HypothesesGenerated}</small><br><small>{N(summary.MemoryBytes / 1048576.0, "0.0")} MiB in memory</small>{VectorsNote(summary.Vectors)}</td>
            <td>{Histogram(summary)}</td>
            <td class="num">{summary.TeachingDimensionEstimate}</td>
            <td class="num">{Pct(summary.PriorExpectedError)}</td>
            <td>{GateCell(summary.Gate)}</td></tr>
            """;
    }

    /// <summary>For text and embedding versions: where the vectors came from and how far they were reduced.</summary>
    private static string VectorsNote(VectorSummary? v) => v is null ? "" :
        $"<br><small>{E(v.Model ?? "platform vectors")}: {v.Length} → {v.Dimensions} components ({Pct(v.ExplainedVariance)} of the variance)</small>";

    /// <summary>The version's test: its length, exact release chances at the target and at the limit, and its warnings.</summary>
    private static string GateCell(GateSummary? g)
    {
        if (g is null) return "–";
        var points = g.OperatingCharacteristic;
        var rows = string.Concat(points.Select(p => $"<tr><td class=\"num\">{Pct(p.RuleError)}</td><td class=\"num\">{Pct(p.Release)}</td><td class=\"num\">{N(p.Items, "0.#")}</td></tr>"));
        var warnings = string.Concat(g.Warnings.Select(w => $"<p class=\"warn\"><small>{E(w)}</small></p>"));
        return $"""
            {E(g.Mode)}, ≤ {g.MaxItems} items × {g.Attempts}<br><small>fails at target {Pct(g.AttemptAlpha)} per attempt; releases at limit {Pct(g.AttemptBeta)} per attempt</small>
            <details><summary>Release chance by rule error</summary>
            <table class="oc"><thead><tr><th scope="col">Rule error</th><th scope="col">Released (all attempts)</th><th scope="col">Test items (expected)</th></tr></thead><tbody>{rows}</tbody></table></details>
            {warnings}
            """;
    }

    /// <summary>A small inline bar chart of the hypotheses' error histogram, with its numbers for screen readers.</summary>
    private static string Histogram(ModelSummary s)
    {
        var h = s.ErrorHistogram;
        if (h.Count == 0) return "–";
        var max = Math.Max(1, h.Max());
        const int w = 4, height = 28;
        var bars = string.Concat(h.Select((c, i) =>
        {
            var bar = c == 0 ? 0 : Math.Max(1.0, c * (double)height / max);
            return $"<rect x=\"{i * w}\" y=\"{N(height - bar, "0.#")}\" width=\"{w - 1}\" height=\"{N(bar, "0.#")}\"/>";
        }));
        var text = string.Join(", ", h.Select((c, i) => c == 0 ? null : $"{N(i * s.ErrorHistogramBinWidth, "0.##")}–{N((i + 1) * s.ErrorHistogramBinWidth, "0.##")}: {c}").Where(t => t is not null));
        return $"<svg class=\"spark\" width=\"{h.Count * w}\" height=\"{height}\" viewBox=\"0 0 {h.Count * w} {height}\" role=\"img\" aria-label=\"Hypotheses by error: {E(text)}\">{bars}</svg>";
    }

    private static string SettingsForm(ProjectSettings s, string token, string problems, IFormCollection? typed)
    {
        var g = s.Gate;
        string V(string name, string value) => E(typed is not null && typed.ContainsKey(name) ? typed[name].ToString() : value);
        string Field(string name, string label, string value, string hint, string type = "number", string extra = "") => $"""
            <div class="field">
              <label for="f-{name}">{label}</label>
              <input id="f-{name}" name="{name}" type="{type}" value="{V(name, value)}" aria-describedby="h-{name}" {extra}>
              <p class="hint" id="h-{name}">{hint}</p>
            </div>
            """;
        string Select(string name, string label, string value, IEnumerable<string> options, string hint) => $"""
            <div class="field">
              <label for="f-{name}">{label}</label>
              <select id="f-{name}" name="{name}" aria-describedby="h-{name}">
                {string.Concat(options.Select(o => $"<option{(V(name, value) == o ? " selected" : "")}>{E(o)}</option>"))}
              </select>
              <p class="hint" id="h-{name}">{hint}</p>
            </div>
            """;
        var end = s.Completion;
        return $"""
            <section class="panel" aria-labelledby="settings-heading">
              <h2 id="settings-heading">Gate and teaching settings</h2>
              <p class="note">Changes apply to model versions compiled from now on; compile a new version to use them.
                 The wording at the end applies to running sessions at once.</p>
              {problems}
              <form method="post" action="/console/settings" class="settings" novalidate>
                {Token(token)}
                <fieldset><legend>Teaching</legend>
                {Field("targetError", "Target error", N(g.TargetError), "The rule error annotators must meet (0–1). Teaching aims below it; the test fails an annotator exactly at it with probability ≤ α per attempt.", extra: "step=\"any\" min=\"0\" max=\"1\"")}
                {Field("confidence", "Confidence", N(g.Confidence), "Belief mass on rules within the target before teaching ends (0–1).", extra: "step=\"any\" min=\"0\" max=\"1\"")}
                {Field("maxTeachingItems", "Teaching budget", g.MaxTeachingItems.ToString(CultureInfo.InvariantCulture), "Most teaching items before the test starts anyway.", extra: "step=\"1\" min=\"1\"")}
                {Select("policy", "Policy", s.Policy, PolicyNames.All, "How the next teaching item is chosen.")}
                </fieldset>
                <fieldset><legend>Test</legend>
                {Select("testMode", "Test rule", g.Test.Mode, [TestModes.Sequential, TestModes.Fixed, TestModes.Belief], "sequential: stops as soon as the result is clear; fixed: always the full length; belief: may also release early on the belief, the sequential test guarding (fewer items, slightly more false releases in simulation).")}
                {Field("testMaxItems", "Test length (most items)", g.Test.MaxItems.ToString(CultureInfo.InvariantCulture), "Held-out items, without feedback.", extra: "step=\"1\" min=\"1\"")}
                {Field("testDelta", "Indifference width", N(g.Test.Delta), "The test separates error ≤ target from error ≥ target + this.", extra: "step=\"any\" min=\"0\" max=\"1\"")}
                {Field("testAlpha", "Test α", N(g.Test.Alpha), "Largest chance, per attempt, of failing an annotator exactly at the target (exact, lapses counted).", extra: "step=\"any\" min=\"0\" max=\"1\"")}
                {Field("testBeta", "Test β", N(g.Test.Beta), "Largest chance, over all attempts, of releasing an annotator at target + width. Settings no test of the length can keep are refused with the length needed.", extra: "step=\"any\" min=\"0\" max=\"1\"")}
                {Field("testTailItems", "Unscored items after the decision", g.Test.TailItems.ToString(CultureInfo.InvariantCulture), "0 to this many items follow a sequential decision, recorded but not counted, so annotators cannot tell which answer decided.", extra: "step=\"1\" min=\"0\" max=\"20\"")}
                {Field("testMinItems", "Belief rule: fewest test items", g.Test.MinItems.ToString(CultureInfo.InvariantCulture), "With the belief rule, test answers needed before the belief may release.", extra: "step=\"1\" min=\"1\"")}
                {Field("retakes", "Retakes", g.Retakes.ToString(CultureInfo.InvariantCulture), "Failed tests that send the annotator back to teaching.", extra: "step=\"1\" min=\"0\"")}
                <div class="field check">
                  <input id="f-requireBeliefAfterTest" name="requireBeliefAfterTest" type="checkbox" value="true"{(g.RequireBeliefAfterTest ? " checked" : "")}>
                  <label for="f-requireBeliefAfterTest">Also require the belief after the test to meet the target</label>
                </div>
                </fieldset>
                <fieldset><legend>What annotators read at the end</legend>
                {Field("releasedMessage", "After a release", end?.ReleasedMessage ?? "", "What happens next, e.g. when live items arrive. Empty: a neutral default.", "text", "maxlength=\"2000\"")}
                {Field("failedMessage", "When not released", end?.FailedMessage ?? "", "What happens next, e.g. who to contact. Empty: a neutral default.", "text", "maxlength=\"2000\"")}
                {Field("continueUrl", "Link at the end (optional)", end?.ContinueUrl ?? "", "An absolute http(s) URL, e.g. back to your platform.", "url")}
                {Field("continueLabel", "Link text", end?.ContinueLabel ?? "", "e.g. Back to my tasks.", "text", "maxlength=\"200\"")}
                </fieldset>
                <button type="submit" class="primary">Save settings</button>
              </form>
            </section>
            """;
    }

    public static async Task<IResult> Upload(
        HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, TimeProvider time,
        IOptions<TeachServeOptions> options, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, "Your console session has ended; sign in again.", StatusCodes.Status401Unauthorized);
        var file = form.Files["file"];
        List<(int?, string, string)> Single(string field, string reason) => [(null, field, reason)];
        if (file is null || file.Length == 0)
            return await RenderProjectAsync(http, db, forms, project, null, ("items", "Choose a file first.", Single("file", "no file was sent")), 422, ct);
        var format = Path.GetExtension(file.FileName).ToLowerInvariant() switch
        {
            ".jsonl" or ".ndjson" => ItemUploadFormat.JsonLines,
            ".json" => ItemUploadFormat.JsonArray,
            ".csv" => ItemUploadFormat.Csv,
            _ => (ItemUploadFormat?)null,
        };
        if (format is null)
            return await RenderProjectAsync(http, db, forms, project, null,
                ("items", "This file type is not read.", Single("file", $"'{file.FileName}' should end in .jsonl, .json or .csv")), 422, ct);

        var limits = options.Value.Uploads;
        string text;
        try
        {
            await using var stream = file.OpenReadStream();
            using var reader = new StreamReader(stream, new UTF8Encoding(false, throwOnInvalidBytes: true));
            text = await reader.ReadToEndAsync(ct);
        }
        catch (DecoderFallbackException)
        {
            return await RenderProjectAsync(http, db, forms, project, null, ("items", "The file is not UTF-8 text.", Single("file", "save it as UTF-8 and upload again")), 422, ct);
        }
        var settings = ProjectsApi.Settings(project);
        var parsed = ItemParsing.Read(format.Value, text, settings, limits.MaxItemsPerUpload);
        if (parsed.Problems.Count > 0)
        {
            var list = parsed.Problems.Select(p => (p.Line, p.Field, p.Reason)).ToList();
            return await RenderProjectAsync(http, db, forms, project, null,
                ("items", $"{file.FileName}: {list.Count} problem(s); nothing was stored.", list), 422, ct);
        }
        var embeddings = http.RequestServices.GetRequiredService<TextEmbeddings>();
        var stored = await ItemsApi.StoreAsync(db, project.Id, settings, parsed.Items, limits, time, embeddings, ct);
        if (stored.Result is Ok<ItemUploadResult> { Value: { } r })
            return await RenderProjectAsync(http, db, forms, project,
                $"{file.FileName}: {r.Received} items read, {r.Created} new, {r.Updated} changed, {r.Unchanged} unchanged. Compile a new model version to teach with them.",
                null, StatusCodes.Status200OK, ct);
        var problem = (ProblemHttpResult)stored.Result;
        return await RenderProjectAsync(http, db, forms, project, null, ("items", problem.ProblemDetails.Detail ?? "Not stored.", []), 422, ct);
    }

    public static async Task<IResult> Compile(
        HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, TimeProvider time, IOptions<TeachServeOptions> options,
        ModelVersionCache cache, VersionCompileQueue queue, CompileSlots slots, ILogger<VersionCompileQueue> logger, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, "Your console session has ended; sign in again.", StatusCodes.Status401Unauthorized);
        try
        {
            var result = await VersionsApi.CreateVersion(project.Id, db, time, options, cache, queue, slots, logger,
                http.RequestServices.GetRequiredService<TextEmbeddings>(), http.Response, ct);
            var (message, status) = result.Result switch
            {
                Created<VersionView> { Value: { } v } => ($"Model version {v.Version} is ready; new sessions use it.", StatusCodes.Status200OK),
                Accepted<VersionView> { Value: { } v } => ($"Model version {v.Version} is compiling in the background; reload this page to see it ready.", StatusCodes.Status200OK),
                Ok<VersionView> { Value: { } v } => ($"Model version {v.Version} already holds these settings and items; nothing new was compiled.", StatusCodes.Status200OK),
                ProblemHttpResult p => (p.ProblemDetails.Detail ?? "Compiling failed.", p.StatusCode),
                _ => ("Compiling finished.", StatusCodes.Status200OK),
            };
            return await RenderProjectAsync(http, db, forms, project, message, null, status, ct);
        }
        catch (ApiProblemException e)
        {
            return await RenderProjectAsync(http, db, forms, project, null, ("versions", e.Message, ProblemList(e)), e.Status, ct);
        }
    }

    public static async Task<IResult> SaveSettings(
        HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, TimeProvider time, Webhooks.WebhookSecrets secrets, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, "Your console session has ended; sign in again.", StatusCodes.Status401Unauthorized);

        var problems = new List<(int?, string, string)>();
        JsonNode? Number(string name, string field, bool integer)
        {
            var text = form[name].ToString().Trim();
            if (integer && int.TryParse(text, NumberStyles.Integer, CultureInfo.InvariantCulture, out var i)) return JsonValue.Create(i);
            if (!integer && double.TryParse(text, NumberStyles.Float, CultureInfo.InvariantCulture, out var d) && double.IsFinite(d)) return JsonValue.Create(d);
            problems.Add((null, field, integer ? "must be a whole number" : "must be a number such as 0.15"));
            return null;
        }
        JsonNode? Text(string name) => form[name].ToString().Trim() is { Length: > 0 } t ? JsonValue.Create(t) : null;

        var patch = new JsonObject
        {
            ["policy"] = form["policy"].ToString(),
            ["gate"] = new JsonObject
            {
                ["targetError"] = Number("targetError", "gate.targetError", false),
                ["confidence"] = Number("confidence", "gate.confidence", false),
                ["maxTeachingItems"] = Number("maxTeachingItems", "gate.maxTeachingItems", true),
                ["retakes"] = Number("retakes", "gate.retakes", true),
                ["requireBeliefAfterTest"] = form["requireBeliefAfterTest"] == "true",
                ["test"] = new JsonObject
                {
                    ["mode"] = form["testMode"].ToString(),
                    ["maxItems"] = Number("testMaxItems", "gate.test.maxItems", true),
                    ["delta"] = Number("testDelta", "gate.test.delta", false),
                    ["alpha"] = Number("testAlpha", "gate.test.alpha", false),
                    ["beta"] = Number("testBeta", "gate.test.beta", false),
                    ["tailItems"] = Number("testTailItems", "gate.test.tailItems", true),
                    ["minItems"] = Number("testMinItems", "gate.test.minItems", true),
                },
            },
            ["completion"] = new JsonObject
            {
                ["releasedMessage"] = Text("releasedMessage"),
                ["failedMessage"] = Text("failedMessage"),
                ["continueUrl"] = Text("continueUrl"),
                ["continueLabel"] = Text("continueLabel"),
            },
        };
        if (problems.Count > 0)
            return await RenderProjectAsync(http, db, forms, project, null, ("settings", "The settings were not saved.", problems), 422, ct, form);
        try
        {
            var result = await ProjectsApi.PatchProject(project.Id, patch, db, time, secrets, ct);
            if (result.Result is ProblemHttpResult p)
                return await RenderProjectAsync(http, db, forms, project, null, ("settings", p.ProblemDetails.Detail ?? "Not saved.", []), 422, ct, form);
        }
        catch (ApiProblemException e)
        {
            return await RenderProjectAsync(http, db, forms, project, null, ("settings", "The settings were not saved.", ProblemList(e)), e.Status, ct, form);
        }
        var saved = await db.Projects.AsNoTracking().FirstAsync(x => x.Id == project.Id, ct);
        return await RenderProjectAsync(http, db, forms, saved, "Settings saved. Compile a new model version to use the new gate.", null, StatusCodes.Status200OK, ct);
    }

    private static List<(int?, string, string)> ProblemList(ApiProblemException e) =>
        e.Extensions.TryGetValue("errors", out var errors) && errors is IEnumerable<FieldProblem> list
            ? list.Select(p => (p.Line, p.Field, p.Reason)).ToList()
            : [(null, "", e.Message)];

    public static async Task<IResult> ExportEvents(HttpContext http, TeachServeDb db, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        http.Response.Headers.ContentDisposition = $"attachment; filename=\"{project.Id}-events.jsonl\"";
        return (await EventsApi.ExportEvents(project.Id, null, db, ct)).Result;
    }

    public static async Task<IResult> ExportSessions(HttpContext http, TeachServeDb db, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        http.Response.Headers.ContentDisposition = $"attachment; filename=\"{project.Id}-sessions.csv\"";
        return Results.Text(await SessionsCsv.WriteAsync(db, project.Id, ct), "text/csv; charset=utf-8");
    }

    private static IResult Html(HttpContext http, string html, int status)
    {
        PageHeaders.Apply(http.Response, "'none'", externalImages: false);
        return Results.Content(html, "text/html; charset=utf-8", Encoding.UTF8, status);
    }
}
