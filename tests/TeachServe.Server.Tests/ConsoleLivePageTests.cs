using System.Net;
using System.Net.Http.Json;
using System.Text.Json.Nodes;
using System.Text.RegularExpressions;
using TeachServe.Core;
using TeachServe.Server.OwnerConsole;

namespace TeachServe.Server.Tests;

/// <summary>The console's live-quality pages and CSV, fed through the real live-checks API.</summary>
public sealed partial class ConsolePageTests
{
    private static readonly DateTimeOffset LiveStart = new(2026, 3, 2, 9, 0, 0, TimeSpan.Zero);

    /// <summary>A worker ref a spreadsheet would run as a formula, with a quote and a comma that need RFC 4180 quoting.</summary>
    private const string FormulaWorker = "=HYPERLINK(\"http://x\",\"y\")";

    /// <summary>A worker ref with a slash, an escape sequence and markup: its link must come back to the same worker.</summary>
    private const string PathWorker = "team/a %2F b <i>";

    private static object LiveOutcome(string id, string worker, int item, string label, int minute) =>
        new { outcomeId = id, workerRef = worker, itemId = $"t{item:00}", label, answeredAt = LiveStart.AddMinutes(minute) };

    private static string TruthOfItem(int i) => i < 10 ? "sound" : "defect";

    private static async Task<(HttpStatusCode Status, string Body, HttpResponseMessage Response)> GetLiveAsync(HttpClient client, string cookies, string path)
    {
        using var request = new HttpRequestMessage(HttpMethod.Get, path);
        request.Headers.Add("Cookie", cookies);
        var response = await client.SendAsync(request);
        return (response.StatusCode, await response.Content.ReadAsStringAsync(), response);
    }

    [Fact]
    public async Task Without_live_checks_the_live_page_tells_the_owner_how_the_platform_reports_them()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await app.ReleaseAsync(keys, "w1");
        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);

        var (status, html, _) = await GetLiveAsync(client, cookies, "/console/live");
        Assert.Equal(HttpStatusCode.OK, status);
        Assert.Contains("<a href=\"/console/live\" aria-current=\"page\">Live quality</a>", html, StringComparison.Ordinal);
        Assert.Contains("No live checks yet", html, StringComparison.Ordinal);
        Assert.Contains($"POST /api/v1/projects/{keys.ProjectId}/live-checks", html, StringComparison.Ordinal);
        Assert.Contains("<a href=\"/reference#op-postlivechecks\">", html, StringComparison.Ordinal);
        Assert.DoesNotContain("<table", html, StringComparison.Ordinal);
        // The onboarding page links it too.
        Assert.Contains("<a href=\"/console/live\">Live quality</a>", (await GetLiveAsync(client, cookies, "/console")).Body, StringComparison.Ordinal);

        var (csvStatus, csv, _) = await GetLiveAsync(client, cookies, "/console/live.csv");
        Assert.Equal(HttpStatusCode.OK, csvStatus);
        Assert.Equal(string.Join(',', LiveConsoleEndpoints.CsvColumns) + "\r\n", csv);
    }

    [Fact]
    public async Task The_live_page_counts_statuses_filters_them_and_an_annotator_view_shows_the_alarm_changes_and_outcomes()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        foreach (var w in new[] { "steady", "clicker", FormulaWorker, PathWorker }) await app.ReleaseAsync(keys, w);

        // steady answers right; clicker at random (seeded) for 60 checks; the other two answer right a few times.
        var random = new SeededRandom(23);
        var outcomes = new List<object>();
        for (var n = 0; n < 60; n++)
        {
            var item = random.NextInt(20);
            outcomes.Add(LiveOutcome($"s{n}", "steady", item, TruthOfItem(item), n));
            outcomes.Add(LiveOutcome($"c{n}", "clicker", item, random.NextInt(2) == 0 ? "sound" : "defect", n));
            if (n < 5) outcomes.Add(LiveOutcome($"f{n}", FormulaWorker, item, TruthOfItem(item), n));
            if (n < 3) outcomes.Add(LiveOutcome($"p{n}", PathWorker, item, TruthOfItem(item), n));
        }
        await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/live-checks", new { outcomes }), 200);
        var list = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality"), 200);
        var byWorker = list["annotators"]!.AsArray().ToDictionary(a => a!["workerRef"]!.GetValue<string>(), a => a!);
        var clicker = byWorker["clicker"];
        // A random clicker alarms within a few checks and, alarming again while due, is paused.
        Assert.Equal("paused", clicker["status"]!.GetValue<string>());
        var alarms = clicker["alarms"]!.GetValue<int>();
        Assert.True(alarms >= 2);

        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);
        var (_, html, _) = await GetLiveAsync(client, cookies, "/console/live");
        Assert.DoesNotContain("<i>", html, StringComparison.Ordinal);
        Assert.Contains("all <strong>4</strong>", html, StringComparison.Ordinal);
        Assert.Matches("<span class=\"live reliable\">reliable</span> <strong>3</strong>", html);
        Assert.Matches("<span class=\"live refresher-due\">refresher due</span> <strong>0</strong>", html);
        Assert.Matches("<span class=\"live paused\">paused</span> <strong>1</strong>", html);
        // Most urgent first: clicker leads the table, then the reliable ones by worker ref.
        var rows = Regex.Matches(html, "<td class=\"worker\"><a href=\"([^\"]+)\">([^<]+)</a></td>").Select(m => (Href: WebUtility.HtmlDecode(m.Groups[1].Value), Text: WebUtility.HtmlDecode(m.Groups[2].Value))).ToList();
        Assert.Equal(["clicker", FormulaWorker, "steady", PathWorker], rows.Select(r => r.Text));
        var live = Pct(clicker["liveError"]!.GetValue<double>());
        Assert.Matches($"<td class=\"num\">60</td>\\s*<td class=\"num\">{clicker["errors"]}</td>\\s*<td class=\"num\">{Regex.Escape(live)} <small>", html);

        var (_, filtered, _) = await GetLiveAsync(client, cookies, "/console/live?status=paused");
        Assert.Equal(["clicker"], Regex.Matches(filtered, "<td class=\"worker\"><a [^>]+>([^<]+)</a>").Select(m => m.Groups[1].Value));
        Assert.Contains("Annotators 1–1 of 1, most urgent first.", filtered, StringComparison.Ordinal);
        var (_, none, _) = await GetLiveAsync(client, cookies, "/console/live?status=refresher-due");
        Assert.Contains("None with this status.", none, StringComparison.Ordinal);

        // The annotator view: the alarm, the status change from the live.status events, the outcomes, the picture.
        var (status, view, _) = await GetLiveAsync(client, cookies, rows[0].Href);
        Assert.Equal(HttpStatusCode.OK, status);
        Assert.Matches("<h2>Drift alarms</h2><p class=\"figure\">" + alarms + "<small>last at 2026-03-02", view);
        Assert.Contains("<span class=\"live reliable\">reliable</span></td>", view, StringComparison.Ordinal);
        Assert.Contains("drift alarm at check", view, StringComparison.Ordinal);
        Assert.Equal(alarms, Regex.Count(view, "<span class=\"alarm\">alarm</span>"));
        Assert.Contains("Checks 1–50 of 60, newest first.", view, StringComparison.Ordinal);
        Assert.Equal(50, Regex.Count(view, "<td>t\\d\\d</td>"));
        Assert.Contains("target p0 12 %", view, StringComparison.Ordinal);
        var (_, older, _) = await GetLiveAsync(client, cookies, rows[0].Href + "?page=2");
        Assert.Contains("Checks 51–60 of 60, newest first.", older, StringComparison.Ordinal);

        var (plotStatus, svg, plot) = await GetLiveAsync(client, cookies, rows[0].Href + "/error.svg");
        Assert.Equal(HttpStatusCode.OK, plotStatus);
        Assert.Equal("image/svg+xml", plot.Content.Headers.ContentType!.MediaType);
        // p0 = 0.95·0.1 + 0.05/2 = 0.12 (GateDesign.AnswerError with the default lapse 0.05 and two labels).
        Assert.Contains("target p0 0.12", svg, StringComparison.Ordinal);
        Assert.Contains("drift alarm", svg, StringComparison.Ordinal);
        var (_, phoneSvg, _) = await GetLiveAsync(client, cookies, rows[0].Href + "/error.svg?size=phone");
        Assert.Contains($"width=\"{LivePlots.Phone.Width}\"", phoneSvg, StringComparison.Ordinal);

        // A worker ref with a slash and "%2F" in it comes back from its link as itself.
        Assert.Equal("/console/live/team%252Fa%2520%25252F%2520b%2520%253Ci%253E", rows[3].Href);
        var (pathStatus, pathView, _) = await GetLiveAsync(client, cookies, rows[3].Href);
        Assert.Equal(HttpStatusCode.OK, pathStatus);
        Assert.Contains("<span class=\"worker\">team/a %2F b &lt;i&gt;</span>", pathView, StringComparison.Ordinal);
        Assert.Contains("Checks 1–3 of 3", pathView, StringComparison.Ordinal);

        // The CSV: every annotator, RFC 4180 quoting, the formula neutralised.
        var (_, csv, csvResponse) = await GetLiveAsync(client, cookies, "/console/live.csv");
        Assert.Equal("text/csv", csvResponse.Content.Headers.ContentType!.MediaType);
        Assert.Contains("-live-quality.csv", csvResponse.Content.Headers.ContentDisposition!.ToString(), StringComparison.Ordinal);
        var lines = csv.Split("\r\n", StringSplitOptions.RemoveEmptyEntries);
        Assert.Equal(5, lines.Length);
        Assert.StartsWith("\"'=HYPERLINK(\"\"http://x\"\",\"\"y\"\")\",reliable,5,0,0,", lines.Single(l => l.Contains("HYPERLINK", StringComparison.Ordinal)), StringComparison.Ordinal);
        var clickerLine = lines.Single(l => l.StartsWith("clicker,", StringComparison.Ordinal)).Split(',');
        Assert.Equal(["clicker", "paused", "60", clicker["errors"]!.ToString()], clickerLine[..4]);
        Assert.Equal(alarms.ToString(System.Globalization.CultureInfo.InvariantCulture), clickerLine[7]);
        Assert.Equal("count-cusum", clickerLine[9]);
    }

    [Fact]
    public async Task An_unknown_worker_goes_back_to_the_table_and_signed_out_visitors_see_nothing()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);
        var (status, _, response) = await GetLiveAsync(client, cookies, "/console/live/nobody");
        Assert.Equal(HttpStatusCode.Redirect, status);
        Assert.Equal("/console/live", response.Headers.Location!.ToString());

        var anonymous = app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false });
        Assert.Equal(HttpStatusCode.Redirect, (await anonymous.GetAsync("/console/live")).StatusCode);
        Assert.Equal(HttpStatusCode.Redirect, (await anonymous.GetAsync("/console/live.csv")).StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.GetAsync("/console/live/nobody/error.svg")).StatusCode);
    }

    private static string Pct(double v) => ConsoleFormat.Pct(v);
}
