using System.Net;
using System.Net.Http.Json;
using System.Text.RegularExpressions;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.OwnerConsole;

namespace TeachServe.Server.Tests;

/// <summary>The owner console's pages as HTML: what owners and annotators typed is shown as text, never as markup.</summary>
public sealed partial class ConsolePageTests
{
    private const string Markup = "<img src=x onerror=alert(1)>";

    [Fact]
    public async Task A_project_name_and_a_worker_ref_with_markup_are_shown_as_text_and_the_pages_carry_no_script()
    {
        using var app = new TestApp();
        var project = TestApp.ProjectJson();
        project["name"] = "Seams & \"welds\" " + Markup;
        var keys = await app.ReadyProjectAsync(project);
        var started = await Api.JsonAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = Markup }), 201);

        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);

        foreach (var path in new[] { "/console", "/console/project", $"/console/sessions/{started["sessionId"]!.GetValue<string>()}" })
        {
            using var request = new HttpRequestMessage(HttpMethod.Get, path);
            request.Headers.Add("Cookie", cookies);
            using var response = await client.SendAsync(request);
            var html = await response.Content.ReadAsStringAsync();
            Assert.Equal(HttpStatusCode.OK, response.StatusCode);
            Assert.StartsWith("text/html", response.Content.Headers.ContentType!.ToString(), StringComparison.Ordinal);
            Assert.Contains("script-src 'self'", response.Headers.GetValues("Content-Security-Policy").Single(), StringComparison.Ordinal);
            Assert.DoesNotContain(Markup, html, StringComparison.Ordinal);
            Assert.DoesNotContain("<script", html, StringComparison.OrdinalIgnoreCase);
            Assert.Contains("Seams &amp; &quot;welds&quot; &lt;img src=x onerror=alert(1)&gt;", html, StringComparison.Ordinal);
        }
        using var onboarding = new HttpRequestMessage(HttpMethod.Get, "/console");
        onboarding.Headers.Add("Cookie", cookies);
        var sessions = await (await client.SendAsync(onboarding)).Content.ReadAsStringAsync();
        Assert.Matches("<td class=\"worker\"><a href=\"/console/sessions/[^\"]+\">&lt;img src=x onerror=alert\\(1\\)&gt;</a></td>", sessions);
    }

    /// <summary>Signs in to the console; the console's cookies are Secure and the test server speaks plain HTTP, so they are carried by hand.</summary>
    private static async Task<(HttpClient Client, string Cookies)> SignInAsync(TestApp app, string ownerKey)
    {
        var client = app.CreateClient(new WebApplicationFactoryClientOptions { HandleCookies = false, AllowAutoRedirect = false });
        using var signInPage = await client.GetAsync("/console");
        var formCookie = Cookie(signInPage, "teachserve-console-form");
        var token = WebUtility.HtmlDecode(FormField().Match(await signInPage.Content.ReadAsStringAsync()).Groups[1].Value);
        using var signIn = new HttpRequestMessage(HttpMethod.Post, "/console/sign-in")
        {
            Content = new FormUrlEncodedContent(new Dictionary<string, string> { ["__form"] = token, ["ownerKey"] = ownerKey }),
        };
        signIn.Headers.Add("Cookie", formCookie);
        using var signedIn = await client.SendAsync(signIn);
        Assert.Equal(HttpStatusCode.Redirect, signedIn.StatusCode);
        return (client, $"{formCookie}; {Cookie(signedIn, "teachserve-console")}");
    }

    [Fact]
    public async Task Calibration_lists_every_tested_annotator_released_or_not_with_a_wilson_interval()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "w-released"), (item, _) => TestApp.TruthOf(item));
        var failing = await app.StartSessionAsync(keys, "w-failed");
        var (final, _) = await TestApp.RunAsync(failing, (item, phase) =>
            phase == "teaching" ? TestApp.TruthOf(item) : (TestApp.TruthOf(item) == "sound" ? "defect" : "sound"));
        Assert.Equal("failed", final["phase"]!.GetValue<string>());
        var evidence = (await app.EvidenceAsync(keys, failing.SessionId))!;
        var (errors, answered) = (evidence["testErrors"]!.GetValue<int>(), evidence["testAnswered"]!.GetValue<int>());

        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);
        using (client)
        {
            using var request = new HttpRequestMessage(HttpMethod.Get, "/console");
            request.Headers.Add("Cookie", cookies);
            var html = await (await client.SendAsync(request)).Content.ReadAsStringAsync();
            Assert.Matches("<tr><td>w-released</td><td>released</td>", html);
            var row = Regex.Match(html, "<tr><td>w-failed</td><td>failed</td><td>[^<]*</td><td>([^<]*)</td><td>([^<]*)</td><td>(\\d+)</td></tr>");
            Assert.True(row.Success, "the failed annotator is missing from the calibration table");
            Assert.Equal(answered, int.Parse(row.Groups[3].Value, System.Globalization.CultureInfo.InvariantCulture));
            // The interval printed is the Wilson score interval of the test errors (Wilson 1927), as the engine computes it.
            var wilson = Core.Statistics.ProportionIntervals.Wilson(errors, answered);
            Assert.Equal($"{OwnerConsole.ConsoleFormat.Pct(wilson.Low)}–{OwnerConsole.ConsoleFormat.Pct(wilson.High)}", WebUtility.HtmlDecode(row.Groups[2].Value));
            Assert.Equal(OwnerConsole.ConsoleFormat.Pct((double)errors / answered), WebUtility.HtmlDecode(row.Groups[1].Value));
        }
    }

[Fact]
    public async Task A_test_item_everyone_misses_is_marked_for_checking_and_teaching_items_are_counted()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        // Every annotator answers right, except on test item h03 (x = 3.5), which every one of them misses: the pattern
        // of a mislabelled item. Sessions go on until it has had enough answers to be judged (test items are drawn at random).
        var missed = 0;
        for (var n = 0; n < 200 && missed < ConsoleStats.MinShownForSuspect + 1; n++)
        {
            await TestApp.RunAsync(await app.StartSessionAsync(keys, $"w-{n}"), (item, phase) =>
            {
                var truth = TestApp.TruthOf(item);
                if (phase != "testing" || item["content"]!["text"]!.GetValue<string>() != "x=3.5") return truth;
                missed++;
                return truth == "sound" ? "defect" : "sound";
            });
        }
        Assert.True(missed > ConsoleStats.MinShownForSuspect);

        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);
        using (client)
        {
            using var request = new HttpRequestMessage(HttpMethod.Get, "/console");
            request.Headers.Add("Cookie", cookies);
            var html = await (await client.SendAsync(request)).Content.ReadAsStringAsync();
            var suspects = Regex.Matches(html, "<tr class=\"suspect\"><td>([^<]+)</td>").Select(m => m.Groups[1].Value).ToList();
            Assert.Equal(["h03"], suspects);
            Assert.Matches($"<tr class=\"suspect\"><td>h03</td><td class=\"num\">{missed}</td><td class=\"num\">{missed}</td>", html);
            // Teaching items are listed with how often they were shown.
            Assert.Matches("(?s)<table class=\"items-stats teaching-items\">.*<td>t\\d\\d</td><td class=\"num\">\\d+</td>", html);
        }
    }

[Fact]
    public async Task Cost_per_release_counts_every_ended_session_paid_for_items_and_time_over_the_releases()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "c-released"), (item, _) => TestApp.TruthOf(item));
        var (failed, _) = await TestApp.RunAsync(await app.StartSessionAsync(keys, "c-failed"), (item, phase) =>
            phase == "teaching" ? TestApp.TruthOf(item) : (TestApp.TruthOf(item) == "sound" ? "defect" : "sound"));
        Assert.Equal("failed", failed["phase"]!.GetValue<string>());
        await app.StartSessionAsync(keys, "c-running"); // not ended: not counted

        var cost = new Core.Projects.CostSettings { PerTeachingItem = 0.3, PerTestItem = 0.7, PerMinute = 12 };
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<Persistence.TeachServeDb>();
        var stats = await ConsoleStats.ComputeAsync(db, keys.ProjectId, CancellationToken.None, cost: cost);
        var ended = await db.Sessions.Where(s => s.ProjectId == keys.ProjectId && !s.IsActive).ToListAsync();
        Assert.Equal(2, ended.Count);
        var paid = ended.Sum(s => (s.TaughtCount * 0.3) + (s.TestAnswered * 0.7) + ((s.EndedAt!.Value - s.CreatedAt).TotalMinutes * 12));
        Assert.Equal(paid / 1, stats.CostPerRelease!.Value, 9);
        Assert.Null((await ConsoleStats.ComputeAsync(db, keys.ProjectId, CancellationToken.None)).CostPerRelease);
    }

    /// <summary>"name=value" of a Set-Cookie header, ready for a Cookie header.</summary>
    private static string Cookie(HttpResponseMessage response, string name) =>
        response.Headers.GetValues("Set-Cookie").First(v => v.StartsWith(name + "=", StringComparison.Ordinal)).Split(';')[0];

    [GeneratedRegex("name=\"__form\" value=\"([^\"]+)\"")]
    private static partial Regex FormField();
}
