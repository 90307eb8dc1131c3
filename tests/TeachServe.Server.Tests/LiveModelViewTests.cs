using System.Net.Http.Json;
using System.Text;
using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Core;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Tests;

/// <summary>
/// The model view of live quality beside the count view, over HTTP: seeded simulated annotators after release (stable,
/// sudden drift to a watched shortcut rule, random answering), the forgetting-rate fit, and the setting's validation.
/// Nothing asserted depends on a session's random seed: the shortcut rule is read from the annotator's own watched rules.
/// </summary>
public sealed class LiveModelViewTests
{
    private static readonly DateTimeOffset Start = new(2026, 3, 1, 8, 0, 0, TimeSpan.Zero);

    private static object Outcome(string id, string worker, string itemId, string label, int minute) =>
        new { outcomeId = id, workerRef = worker, itemId, label, answeredAt = Start.AddMinutes(minute) };

    private static Task<HttpResponseMessage> PostAsync(TestApp app, TestApp.Keys keys, IEnumerable<object> outcomes) =>
        app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/live-checks", new { outcomes = outcomes.ToArray() });

    private static async Task<JsonNode> HistoryAsync(TestApp app, TestApp.Keys keys, string worker) =>
        await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/live-quality/{worker}"), 200);

    private static async Task<CompiledVersion> VersionAsync(TestApp app, TestApp.Keys keys)
    {
        using var scope = app.Services.CreateScope();
        return await scope.ServiceProvider.GetRequiredService<ModelVersionCache>().GetAsync(keys.ProjectId, 1, CancellationToken.None);
    }

    /// <summary>A truthful annotator who slips to the other label on 3 % of checks.</summary>
    private static string Stable(CompiledVersion v, int item, SeededRandom random)
    {
        var truth = v.Model.TrueLabel(item);
        return v.Model.Labels[random.NextDouble() < 0.03 ? 1 - truth : truth];
    }

    [Fact]
    public async Task Both_views_stay_within_target_for_a_stable_annotator_and_both_flag_drift_to_a_shortcut_or_random_answering()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        string[] workers = ["stable", "shortcut", "clicker"];
        foreach (var w in workers) await app.ReleaseAsync(keys, w);
        var v = await VersionAsync(app, keys);
        var model = v.Model;
        var random = new SeededRandom(2015);
        var n = 0;

        async Task SendAsync(int checks, Func<string, int, string> answer)
        {
            for (var sent = 0; sent < checks; sent += 50)
            {
                var batch = new List<object>();
                for (var k = 0; k < 50; k++, n++)
                {
                    var item = random.NextInt(model.ItemCount);
                    foreach (var w in workers) batch.Add(Outcome($"{w}-{n}", w, model.ItemIds[item], answer(w, item), n));
                }
                await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
            }
        }

        // Before any drift all three answer alike: every view within target, the views agreeing.
        await SendAsync(100, (_, item) => Stable(v, item, random));
        var watched = (await HistoryAsync(app, keys, "shortcut"))["watchedRules"]!.AsArray();
        Assert.NotEmpty(watched);
        foreach (var w in workers)
        {
            var a = (await HistoryAsync(app, keys, w))["annotator"]!;
            Assert.Equal("reliable", a["status"]!.GetValue<string>());
            Assert.Equal("within-target", a["modelView"]!.GetValue<string>());
            Assert.True(a["viewsAgree"]!.GetValue<bool>());
        }

        // Then the shortcut annotator follows the watched rule of largest error (still slipping on 3 %), the clicker answers
        // at random, and the stable one goes on as before.
        var rule = watched.Select(r => r!["rule"]!.GetValue<int>()).MaxBy(r => model.Error[r]);
        var description = watched.First(r => r!["rule"]!.GetValue<int>() == rule)!["description"]!.GetValue<string>();
        await SendAsync(300, (w, item) => w switch
        {
            "shortcut" => model.Labels[random.NextDouble() < 0.03 ? 1 - model.Predict(rule, item) : model.Predict(rule, item)],
            "clicker" => model.Labels[random.NextInt(2)],
            _ => Stable(v, item, random),
        });

        var stable = await HistoryAsync(app, keys, "stable");
        var s = stable["annotator"]!;
        var target = s["targetAnswerError"]!.GetValue<double>();
        Assert.Equal("reliable", s["status"]!.GetValue<string>());
        Assert.Equal(0, s["alarms"]!.GetValue<int>());
        Assert.Equal("within-target", s["modelView"]!.GetValue<string>());
        Assert.Equal("within-target", s["countView"]!.GetValue<string>());
        Assert.True(s["viewsAgree"]!.GetValue<bool>());
        Assert.True(s["modelPredictedError"]!.GetValue<double>() < target);

        var events = (await SimulatedAnnotators.EventsAsync(app.Client(keys.OwnerKey), keys.ProjectId))
            .Where(e => e["type"]!.GetValue<string>() == "live.status").ToList();
        // The count chart may put a stable annotator on watch by chance (half its limit); neither view ever called for more.
        var stableEvents = events.Where(e => e["workerRef"]!.GetValue<string>() == "stable").ToList();
        Assert.DoesNotContain(stableEvents, e => e["data"]!["to"]!.GetValue<string>() is "refresher-due" or "paused");
        Assert.DoesNotContain(stableEvents, e => e["data"]!["causes"]!.AsArray().Any(c => c!.GetValue<string>() != "count-chart"));

        foreach (var w in new[] { "shortcut", "clicker" })
        {
            var history = await HistoryAsync(app, keys, w);
            var a = history["annotator"]!;
            var drifted = history["outcomes"]!.AsArray().Skip(100).ToList();
            // A model-free chart alarmed during the drift (for the shortcut the count chart or the watched rule's chart,
            // whichever is first: the rule, and so its error, comes from the release belief, which depends on the
            // session's random seed; for random answering the count chart), and the model view ends above target; the
            // views do not disagree.
            string[] charts = w == "shortcut" ? ["count-cusum", "candidate-rule"] : ["count-cusum"];
            Assert.Contains(drifted, o => o!["alarm"]?.GetValue<string>() is { } alarm && charts.Any(c => alarm.Contains(c, StringComparison.Ordinal)));
            Assert.True(a["modelPredictedError"]!.GetValue<double>() > target, $"{w}: model error {a["modelPredictedError"]} at target {target}");
            Assert.Equal("above-target", a["modelView"]!.GetValue<string>());
            Assert.True(a["viewsAgree"]!.GetValue<bool>());
            Assert.NotEqual("reliable", a["status"]!.GetValue<string>());
            // Each change names the views that caused it; the first one away from reliable has at least one.
            var mine = events.Where(e => e["workerRef"]!.GetValue<string>() == w).ToList();
            Assert.NotEmpty(mine[0]["data"]!["causes"]!.AsArray());
        }
        Assert.Equal("above-target", (await HistoryAsync(app, keys, "clicker"))["annotator"]!["countView"]!.GetValue<string>());

        // The shortcut rule is a watched one: its own chart alarmed and a status change names it in words.
        var shortcutEvents = events.Where(e => e["workerRef"]!.GetValue<string>() == "shortcut").ToList();
        Assert.Contains(shortcutEvents, e => e["data"]!["candidateRule"]?.GetValue<string>() == description
            && e["data"]!["causes"]!.AsArray().Any(c => c!.GetValue<string>() == "candidate-rule"));
        var confusions = (await HistoryAsync(app, keys, "shortcut"))["likelyConfusions"]!.AsArray();
        Assert.NotEmpty(confusions);
        Assert.All(confusions, c => Assert.Contains(c!["knownLabel"]!.GetValue<string>(), model.Labels));
    }

    [Fact]
    public async Task The_forgetting_rate_is_fitted_from_live_records_with_its_interval_and_applied_to_the_project()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        string[] workers = ["f1", "f2", "f3"];
        foreach (var w in workers) await app.ReleaseAsync(keys, w);
        var v = await VersionAsync(app, keys);
        var random = new SeededRandom(77);
        var owner = app.Client(keys.OwnerKey);
        var url = $"/api/v1/projects/{keys.ProjectId}/live-quality/forgetting-fit";

        var none = await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { apply = false }), 422);
        Assert.Contains("No annotator", none["detail"]!.GetValue<string>());
        var n = 0;
        async Task SendAsync(int checks)
        {
            var batch = new List<object>();
            for (var k = 0; k < checks; k++, n++)
            {
                var item = random.NextInt(v.Model.ItemCount);
                foreach (var w in workers) batch.Add(Outcome($"{w}-{n}", w, v.Model.ItemIds[item], Stable(v, item, random), n));
            }
            await Api.JsonAsync(await PostAsync(app, keys, batch), 200);
        }
        await SendAsync(20);
        var few = await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { apply = false }), 422);
        Assert.Contains("Too few live checks", few["detail"]!.GetValue<string>());
        Assert.Contains("60", few["detail"]!.GetValue<string>());
        await Api.ProblemAsync(await owner.PostAsJsonAsync(url, new { confidence = 1.5 }), 400);
        await Api.ProblemAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync(url, new { apply = false }), 403);

        await SendAsync(60);
        var fit = await Api.JsonAsync(await owner.PostAsJsonAsync(url, new { apply = true }), 200);
        var rate = fit["perCheck"]!.GetValue<double>();
        Assert.Equal(240, fit["checks"]!.GetValue<int>());
        Assert.Equal(3, fit["annotators"]!.GetValue<int>());
        Assert.InRange(rate, fit["low"]!.GetValue<double>(), fit["high"]!.GetValue<double>());
        Assert.InRange(fit["low"]!.GetValue<double>(), 0, 0.5);
        Assert.InRange(fit["high"]!.GetValue<double>(), 0, 0.5);
        Assert.Equal(0.005, fit["previousPerCheck"]!.GetValue<double>());
        Assert.True(fit["applied"]!.GetValue<bool>());

        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            var project = await db.Projects.AsNoTracking().FirstAsync(p => p.Id == keys.ProjectId);
            Assert.Equal(rate, ProjectOperations.Settings(project).Live.ForgettingPerCheck);
        }

        // The next batch rebuilds each annotator's views with the new rate: the stored view equals the replay's last point.
        await SendAsync(5);
        var history = await HistoryAsync(app, keys, "f1");
        Assert.Equal(history["outcomes"]!.AsArray()[^1]!["modelPredictedError"]!.GetValue<double>(),
            history["annotator"]!["modelPredictedError"]!.GetValue<double>());
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            Assert.All(await db.LiveMonitors.AsNoTracking().Where(m => m.ProjectId == keys.ProjectId).ToListAsync(),
                m => Assert.Equal(rate, m.ForgettingPerCheck));
        }
    }

    [Theory]
    [InlineData("{\"live\":{\"forgettingPerCheck\":0.7}}", "live.forgettingPerCheck")]
    [InlineData("{\"live\":{\"forgettingPerCheck\":-0.1}}", "live.forgettingPerCheck")]
    [InlineData("{\"live\":{\"candidateRules\":11}}", "live.candidateRules")]
    public async Task Live_settings_out_of_range_are_refused_with_the_field_named(string patch, string field)
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var response = await app.Client(keys.OwnerKey).PatchAsync($"/api/v1/projects/{keys.ProjectId}",
            new StringContent(patch, Encoding.UTF8, "application/merge-patch+json"));
        Assert.True((int)response.StatusCode is 400 or 422, $"status {(int)response.StatusCode}");
        Assert.Contains(field, await response.Content.ReadAsStringAsync());
    }
}
