using System.Globalization;
using System.Net;
using System.Text;
using System.Text.Json.Nodes;
using System.Text.RegularExpressions;

namespace TeachServe.Server.Tests;

/// <summary>The per-annotator page (/console/sessions/{id}) and the onboarding page's model-version filter.</summary>
public sealed partial class ConsolePageTests
{
    private static async Task<(HttpStatusCode Status, string Body)> GetAsync(HttpClient client, string cookies, string path)
    {
        using var request = new HttpRequestMessage(HttpMethod.Get, path);
        request.Headers.Add("Cookie", cookies);
        using var response = await client.SendAsync(request);
        return (response.StatusCode, await response.Content.ReadAsStringAsync());
    }

    [Fact]
    public async Task The_annotator_page_lists_every_answer_with_its_mistakes_times_and_each_check_with_the_gates_decision()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync(TestApp.ProjectJson(retakes: 1));
        var session = await app.StartSessionAsync(keys, "w-detail");
        // Each answer comes a known number of seconds after the one before (the clock is the test's), so the page's
        // times are known: answer k (from 0) takes 3 + (k mod 5) seconds. The second teaching answer is wrong, the
        // whole first check is wrong (a retake), the second check right.
        var answered = new List<(string Phase, bool Wrong, int Seconds)>();
        var taught = 0;
        var checks = 0;
        string? lastPhase = null;
        var (final, _) = await TestApp.RunAsync(session, (item, phase) =>
        {
            var seconds = 3 + (answered.Count % 5);
            app.Time.Advance(TimeSpan.FromSeconds(seconds));
            if (phase == "testing" && lastPhase != "testing") checks++;
            lastPhase = phase;
            var truth = TestApp.TruthOf(item);
            var wrong = phase == "teaching" ? ++taught == 2 : checks == 1;
            answered.Add((phase, wrong, seconds));
            return wrong ? (truth == "sound" ? "defect" : "sound") : truth;
        });
        var evidence = (await app.EvidenceAsync(keys, session.SessionId))!;
        var attempts = evidence["attempts"]!.AsArray();
        Assert.Equal(2, attempts.Count);

        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);
        using (client)
        {
            var (listStatus, list) = await GetAsync(client, cookies, "/console");
            Assert.Equal(HttpStatusCode.OK, listStatus);
            Assert.Contains($"<td class=\"worker\"><a href=\"/console/sessions/{session.SessionId}\">w-detail</a></td>", list, StringComparison.Ordinal);

            var (status, html) = await GetAsync(client, cookies, $"/console/sessions/{session.SessionId}");
            Assert.Equal(HttpStatusCode.OK, status);
            Assert.DoesNotContain("<script", html, StringComparison.OrdinalIgnoreCase);
            Assert.Contains("w-detail", html, StringComparison.Ordinal);
            Assert.Contains("<a href=\"/console?version=1\">version 1</a>", html, StringComparison.Ordinal);
            Assert.Contains("adaptive", html, StringComparison.Ordinal);
            Assert.Contains($"data-outcome=\"{final["phase"]!.GetValue<string>()}\"", html, StringComparison.Ordinal);

            // One row per answer, in order, each mistake highlighted, each time as the clock moved.
            var rows = Regex.Matches(html, "<tr(?: class=\"mistake\")? data-step=\"(\\d+)\">(.*?)</tr>", RegexOptions.Singleline);
            Assert.Equal(answered.Count, rows.Count);
            for (var k = 0; k < rows.Count; k++)
            {
                var row = rows[k];
                Assert.Equal(k, int.Parse(row.Groups[1].Value, CultureInfo.InvariantCulture));
                Assert.Equal(answered[k].Wrong, row.Value.StartsWith("<tr class=\"mistake\"", StringComparison.Ordinal));
                var cells = Regex.Matches(row.Groups[2].Value, "<td[^>]*>(.*?)</td>", RegexOptions.Singleline).Select(c => c.Groups[1].Value).ToList();
                Assert.Equal(answered[k].Phase == "teaching" ? "teach" : (k < answered.FindLastIndex(a => a.Phase == "teaching") ? "test 1" : "test 2"), cells[1]);
                Assert.Matches("^<span class=\"item-id\">[th]\\d\\d</span> <small>x=[0-9.]+</small>$", cells[2]);
                Assert.Equal(answered[k].Wrong ? "wrong" : "right", cells[5].Split(' ')[0]);
                Assert.Equal($"{answered[k].Seconds} s", cells[6]);
                if (answered[k].Phase == "teaching")
                {
                    // Feedback showed the true label, so the owner sees it; the predicted error was recorded with the answer.
                    var given = cells[3];
                    Assert.Equal(answered[k].Wrong ? (given == "sound" ? "defect" : "sound") : given, cells[4]);
                    Assert.EndsWith("%", WebUtility.HtmlDecode(cells[7]), StringComparison.Ordinal);
                }
                else
                {
                    // A test item's label never leaves the server; only whether the answer was right.
                    Assert.Equal("–", WebUtility.HtmlDecode(cells[4]));
                    Assert.Equal("–", WebUtility.HtmlDecode(cells[7]));
                }
            }

            // Each check: its items, its errors as the evidence counts them, its verdict and what the gate did.
            var checkRows = Regex.Matches(html, "<tr data-attempt=\"(\\d)\">(.*?)</tr>", RegexOptions.Singleline);
            Assert.Equal(2, checkRows.Count);
            for (var a = 0; a < 2; a++)
            {
                var cells = Regex.Matches(checkRows[a].Groups[2].Value, "<td[^>]*>(.*?)</td>", RegexOptions.Singleline).Select(c => c.Groups[1].Value).ToList();
                var e = attempts[a]!;
                Assert.Equal(e["answered"]!.GetValue<int>(), int.Parse(cells[2], CultureInfo.InvariantCulture));
                Assert.Equal(e["errors"]!.GetValue<int>(), int.Parse(cells[3], CultureInfo.InvariantCulture));
                Assert.Equal($"{e["countedAnswered"]!.GetValue<int>()} ({e["countedErrors"]!.GetValue<int>()})", cells[4]);
                Assert.Equal(cells[1].Split(", ").Length, e["answered"]!.GetValue<int>());
            }
            Assert.Equal(attempts[0]!["answered"]!.GetValue<int>(), attempts[0]!["errors"]!.GetValue<int>());
            Assert.Contains("<td>fail</td>\n              <td>not passed: retake, back to teaching</td>", html, StringComparison.Ordinal);
            var second = attempts[1]!["passed"]!.GetValue<bool>();
            Assert.Equal(final["phase"]!.GetValue<string>() == "released", second);
            Assert.Contains(second ? "<td>pass</td>\n              <td>passed: released</td>" : "<td>fail</td>\n              <td>not passed: failed</td>",
                html, StringComparison.Ordinal);

            // The items taught, in order, as the evidence lists them.
            var taughtIds = evidence["taughtItemIds"]!.AsArray().Select(i => i!.GetValue<string>()).ToList();
            Assert.Contains($"{taughtIds.Count} items, in the order shown: {string.Join(", ", taughtIds)}.", html, StringComparison.Ordinal);

            // The picture of the predicted error along the session, with the version's target.
            var (plotStatus, svg) = await GetAsync(client, cookies, $"/console/sessions/{session.SessionId}/predicted-error.svg");
            Assert.Equal(HttpStatusCode.OK, plotStatus);
            Assert.Contains("<svg", svg, StringComparison.Ordinal);
        }
    }

    [Fact]
    public async Task An_unknown_session_or_another_projects_session_is_a_404_page()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var other = await app.ReadyProjectAsync();
        var theirs = await app.StartSessionAsync(other, "w-other");
        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);
        using (client)
        {
            foreach (var id in new[] { "s_nope", theirs.SessionId, "<b>x</b>" })
            {
                var (status, html) = await GetAsync(client, cookies, $"/console/sessions/{Uri.EscapeDataString(id)}");
                Assert.Equal(HttpStatusCode.NotFound, status);
                Assert.Contains("No session with this id in your project.", html, StringComparison.Ordinal);
                Assert.DoesNotContain("w-other", html, StringComparison.Ordinal);
                var (plotStatus, _) = await GetAsync(client, cookies, $"/console/sessions/{Uri.EscapeDataString(id)}/predicted-error.svg");
                Assert.Equal(HttpStatusCode.NotFound, plotStatus);
            }
        }
        // Signed out, the page asks for the owner key instead.
        using var anonymous = app.CreateClient(new Microsoft.AspNetCore.Mvc.Testing.WebApplicationFactoryClientOptions { AllowAutoRedirect = false });
        using var redirected = await anonymous.GetAsync($"/console/sessions/{theirs.SessionId}");
        Assert.Equal(HttpStatusCode.Redirect, redirected.StatusCode);
    }

    [Fact]
    public async Task The_version_filter_restricts_the_sessions_and_draws_each_versions_target()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "w-v1"), (item, _) => TestApp.TruthOf(item));
        var owner = app.Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PatchAsync($"/api/v1/projects/{keys.ProjectId}",
            new StringContent("{\"gate\":{\"targetError\":0.2}}", Encoding.UTF8, "application/merge-patch+json")), 200);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        // Started a minute later, so "newest first" has one answer (ids of one instant sort at random).
        app.Time.Advance(TimeSpan.FromMinutes(1));
        await TestApp.RunAsync(await app.StartSessionAsync(keys, "w-v2"), (item, _) => TestApp.TruthOf(item));

        var (client, cookies) = await SignInAsync(app, keys.OwnerKey);
        using (client)
        {
            static List<string> Workers(string html) =>
                Regex.Matches(html, "<td class=\"worker\"><a href=\"[^\"]+\">([^<]+)</a></td>").Select(m => m.Groups[1].Value).ToList();
            static List<string> Calibrated(string html) =>
                Regex.Matches(html, "<tr><td>(w-v\\d)</td><td>released</td>").Select(m => m.Groups[1].Value).ToList();

            var (_, all) = await GetAsync(client, cookies, "/console");
            Assert.Equal(["w-v2", "w-v1"], Workers(all));
            Assert.Equal(2, Calibrated(all).Count);
            Assert.Contains("<option value=\"all\" selected>All versions</option>", all, StringComparison.Ordinal);
            Assert.Contains("Version 2 (target error 20 %)", all, StringComparison.Ordinal);
            Assert.Contains("<img src=\"/console/plots/calibration.svg\"", all, StringComparison.Ordinal);
            Assert.Contains("Targets differ between versions", all, StringComparison.Ordinal);

            var (_, one) = await GetAsync(client, cookies, "/console?version=1");
            Assert.Equal(["w-v1"], Workers(one));
            Assert.Equal(["w-v1"], Calibrated(one));
            Assert.Contains("<option value=\"1\" selected>", one, StringComparison.Ordinal);
            Assert.Contains("<img src=\"/console/plots/calibration.svg?version=1\"", one, StringComparison.Ordinal);
            Assert.Contains("Target: 10 %.", one, StringComparison.Ordinal);

            var (_, two) = await GetAsync(client, cookies, "/console?version=2&page=3");
            Assert.Equal(["w-v2"], Workers(two));
            Assert.Contains("Target: 20 %.", two, StringComparison.Ordinal);

            // A version that does not exist shows every version, and says so.
            var (status, unknown) = await GetAsync(client, cookies, "/console?version=9");
            Assert.Equal(HttpStatusCode.OK, status);
            Assert.Equal(2, Workers(unknown).Count);
            Assert.Contains("There is no model version “9”; showing all versions.", WebUtility.HtmlDecode(unknown), StringComparison.Ordinal);

            // The pictures: one target line for one version, one labelled line per version's target for all.
            var (_, curveAll) = await GetAsync(client, cookies, "/console/plots/learning-curve.svg");
            Assert.Contains("target 0.2 (v2)", curveAll, StringComparison.Ordinal);
            Assert.Contains("target 0.1 (v1)", curveAll, StringComparison.Ordinal);
            var (_, curveOne) = await GetAsync(client, cookies, "/console/plots/calibration.svg?version=2");
            Assert.Contains("target error 0.2", curveOne, StringComparison.Ordinal);
            Assert.DoesNotContain("0.1", Regex.Match(curveOne, "target[^<]*").Value, StringComparison.Ordinal);
        }
    }
}
