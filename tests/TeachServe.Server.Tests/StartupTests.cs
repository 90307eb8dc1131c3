using System.Net.Http.Json;
using Microsoft.AspNetCore.DataProtection;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using System.Text.Json.Nodes;
using System.Text.RegularExpressions;
using TeachServe.Core.Projects;

namespace TeachServe.Server.Tests;

public sealed partial class StartupTests
{
    [Fact]
    public async Task Without_a_configured_admin_key_one_is_generated_printed_once_and_kept()
    {
        var dir = TestApp.NewDataDirectory();
        var time = new Microsoft.Extensions.Time.Testing.FakeTimeProvider(DateTimeOffset.UnixEpoch.AddYears(56));
        string key;
        using (var first = new TestApp(new() { ["TeachServe:AdminKey"] = null }, dir, time))
        {
            first.Client();
            key = AdminKey().Match(first.Banner.ToString()).Value;
            Assert.StartsWith("tsa.", key, StringComparison.Ordinal);
            await Api.JsonAsync(await first.Client(key).PostAsJsonAsync("/api/v1/projects", TestApp.ProjectJson()), 201);
        }
        using (var second = new TestApp(new() { ["TeachServe:AdminKey"] = null }, dir, time))
        {
            second.Client();
            Assert.DoesNotContain(key, second.Banner.ToString(), StringComparison.Ordinal);
            await Api.JsonAsync(await second.Client(key).PostAsJsonAsync("/api/v1/projects", TestApp.ProjectJson()), 201);
        }
        Microsoft.Data.Sqlite.SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    [Fact]
    public async Task The_console_key_ring_is_created_in_the_database_at_start_and_kept_across_restarts()
    {
        // Console cookies and form tokens are encrypted with these keys; a node behind a balancer, or restarted,
        // must find the same ring (ConsoleAcrossNodesTests checks two nodes with separate home folders).
        var dir = TestApp.NewDataDirectory();
        int keyId;
        string sealedText;
        using (var first = new TestApp(dataDirectory: dir))
        {
            first.Client();
            var keys = await KeyRowsAsync(first);
            var key = Assert.Single(keys);
            Assert.Contains("<key ", key.Xml, StringComparison.Ordinal);
            keyId = key.Id;
            sealedText = first.Service<IDataProtectionProvider>().CreateProtector("restart-check").Protect("owner console");
        }
        using (var second = new TestApp(dataDirectory: dir))
        {
            second.Client();
            Assert.Equal(keyId, Assert.Single(await KeyRowsAsync(second)).Id);
            Assert.Equal("owner console", second.Service<IDataProtectionProvider>().CreateProtector("restart-check").Unprotect(sealedText));
        }
        Microsoft.Data.Sqlite.SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    private static async Task<List<Microsoft.AspNetCore.DataProtection.EntityFrameworkCore.DataProtectionKey>> KeyRowsAsync(TestApp app)
    {
        using var scope = app.Services.CreateScope();
        return await scope.ServiceProvider.GetRequiredService<TeachServe.Server.Persistence.TeachServeDb>()
            .DataProtectionKeys.AsNoTracking().ToListAsync();
    }

    [Fact]
    public async Task The_demo_project_is_loaded_compiled_and_ready_for_an_annotator()
    {
        var folder = Path.Combine(TestApp.NewDataDirectory(), "demo");
        var items = TestApp.ItemsJsonl().Split('\n', StringSplitOptions.RemoveEmptyEntries)
            .Select(l => System.Text.Json.JsonSerializer.Deserialize<ItemDefinition>(l, ProjectJson.Options)!).ToList();
        var settings = System.Text.Json.JsonSerializer.Deserialize<ProjectSettings>(TestApp.ProjectJson().ToJsonString(), ProjectJson.Options)!;
        ProjectFolder.Save(new ProjectDefinition(settings, items), folder);

        using var app = new TestApp(new() { ["TeachServe:LoadDemo"] = "true", ["TeachServe:DemoProjectDirectory"] = folder });
        app.Client();
        var banner = app.Banner.ToString();
        var owner = Line(banner, "Owner key");
        var token = Line(banner, "Session token");
        var session = Line(banner, "Demo session");
        Assert.Contains("/annotate/", Line(banner, "Annotator link"), StringComparison.Ordinal);
        Assert.DoesNotContain(token, Line(banner, "Annotator link"), StringComparison.Ordinal);
        var projectId = owner.Split('.')[1];
        var project = await Api.JsonAsync(await app.Client(owner).GetAsync($"/api/v1/projects/{projectId}"), 200);
        Assert.Equal(1, project["latestReadyVersion"]!.GetValue<int>());
        var next = await Api.JsonAsync(await app.Client(token).GetAsync($"/api/v1/sessions/{session}/next"), 200);
        Assert.NotNull(next["item"]);
        Directory.Delete(Path.GetDirectoryName(folder)!, recursive: true);
    }

    [Fact]
    public async Task Misconfiguration_stops_the_start_with_a_readable_message()
    {
        // The real process, as an operator starts it: the in-process test host can report its own disposal race
        // (ObjectDisposedException) instead of the start's error when a start fails on a busy machine.
        var (exitCode, message) = await ServerProcess.StartExpectingExitAsync(new Dictionary<string, string>
        {
            ["TeachServe:DataDirectory"] = TestApp.NewDataDirectory(),
            ["TeachServe:Database:Provider"] = "oracle",
            ["TeachServe:AdminKey"] = "short",
        });
        Assert.NotEqual(0, exitCode);
        Assert.Contains("Database:Provider must be 'sqlite' or 'postgres'", message, StringComparison.Ordinal);
        Assert.Contains("AdminKey must be 24 to 256 printable characters", message, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("Zm9vYmFyYmF6cXV4cXV1eHF1dXo0Mg==")] // openssl rand -base64 style, with padding
    [InlineData("correct-horse-battery-staple-42")]
    [InlineData("tsa.a-configured-admin-key-of-our-form")]
    public async Task A_configured_admin_key_of_any_accepted_form_works(string configured)
    {
        using var app = new TestApp(new() { ["TeachServe:AdminKey"] = configured });
        await Api.JsonAsync(await app.Client(configured).PostAsJsonAsync("/api/v1/projects", TestApp.ProjectJson()), 201);
        await Api.ProblemAsync(await app.Client(configured + "x").PostAsJsonAsync("/api/v1/projects", TestApp.ProjectJson()), 401);
    }

    [Theory]
    [InlineData("tso.prj_looks-like-an-owner-key-00000")]
    [InlineData("has a space in the middle of it 000")]
    public async Task An_admin_key_the_key_check_could_misread_is_refused_at_start_naming_the_form(string configured)
    {
        var (exitCode, message) = await ServerProcess.StartExpectingExitAsync(new Dictionary<string, string>
        {
            ["TeachServe:DataDirectory"] = TestApp.NewDataDirectory(),
            ["TeachServe:AdminKey"] = configured,
        });
        Assert.NotEqual(0, exitCode);
        Assert.Contains("AdminKey must be 24 to 256 printable characters without spaces", message, StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_first_start_on_an_empty_folder_logs_no_failure_and_no_warning()
    {
        // The real process with its shipped settings (the demo project loads), as an operator first starts it.
        var dir = TestApp.NewDataDirectory();
        string output;
        using (var server = await ServerProcess.StartAsync(new Dictionary<string, string> { ["TeachServe:DataDirectory"] = dir }, ServerProcess.FreePort()))
        {
            output = await server.KillAndReadOutputAsync();
        }
        Assert.Contains("TeachServe is ready.", output, StringComparison.Ordinal);
        Assert.DoesNotContain("fail:", output, StringComparison.Ordinal);
        Assert.DoesNotContain("warn:", output, StringComparison.Ordinal);
        Assert.DoesNotContain("   at ", output, StringComparison.Ordinal);
        Directory.Delete(dir, recursive: true);
    }

    private static string Line(string banner, string name) =>
        banner.Split('\n').Single(l => l.TrimStart().StartsWith(name, StringComparison.Ordinal)).Trim()[name.Length..].Trim().Split(' ')[0];

    [GeneratedRegex(@"tsa\.[A-Za-z0-9_-]{20,}")]
    private static partial Regex AdminKey();
}
