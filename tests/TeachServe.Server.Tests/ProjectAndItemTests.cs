using System.Net.Http.Json;
using System.Text;
using System.Text.Json.Nodes;

namespace TeachServe.Server.Tests;

public sealed class ProjectAndItemTests
{
    [Fact]
    public async Task Create_read_and_merge_patch_a_project()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        Assert.StartsWith("tso.", keys.OwnerKey, StringComparison.Ordinal);
        Assert.StartsWith("tse.", keys.EmbedKey, StringComparison.Ordinal);
        var owner = app.Client(keys.OwnerKey);
        var patch = new JsonObject
        {
            ["gate"] = new JsonObject { ["targetError"] = 0.2 },
            ["releaseWebhook"] = new JsonObject { ["url"] = "http://127.0.0.1:9/hook", ["secret"] = HookReceiver.Secret },
        };
        var patched = await Api.JsonAsync(await owner.PatchAsync($"/api/v1/projects/{keys.ProjectId}",
            new StringContent(patch.ToJsonString(), Encoding.UTF8, "application/merge-patch+json")), 200);
        Assert.Equal(0.2, patched["settings"]!["gate"]!["targetError"]!.GetValue<double>());
        Assert.Equal(10, patched["settings"]!["gate"]!["maxTeachingItems"]!.GetValue<int>());
        Assert.True(patched["releaseWebhook"]!["secretSet"]!.GetValue<bool>());
        Assert.DoesNotContain(HookReceiver.Secret["whsec_".Length..], patched.ToJsonString(), StringComparison.Ordinal);

        var read = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}"), 200);
        Assert.Equal(0.2, read["settings"]!["gate"]!["targetError"]!.GetValue<double>());
    }

    [Fact]
    public async Task Invalid_settings_are_422_and_unknown_fields_400()
    {
        using var app = new TestApp();
        var admin = app.Client(TestApp.AdminKey);
        var bad = TestApp.ProjectJson();
        bad["gate"]!["targetError"] = 3.0;
        bad["labels"] = new JsonArray("only");
        var problem = await Api.ProblemAsync(await admin.PostAsJsonAsync("/api/v1/projects", bad), 422);
        var fields = problem["errors"]!.AsArray().Select(e => e!["field"]!.GetValue<string>()).ToList();
        Assert.Contains("gate.targetError", fields);
        Assert.Contains("labels", fields);

        // Standard Webhooks secrets: whsec_ and the base64 of 24 to 64 bytes; a password of the older kind is refused.
        foreach (var secret in new[] { "0123456789abcdef-secret", "whsec_" + Convert.ToBase64String(new byte[16]), "whsec_" + Convert.ToBase64String(new byte[65]) })
        {
            var refused = await Api.ProblemAsync(await admin.PostAsJsonAsync("/api/v1/projects", HookReceiver.ProjectWithHook("http://127.0.0.1:9/hook", secret)), 422);
            Assert.Equal(["releaseWebhook.secret"], refused["errors"]!.AsArray().Select(e => e!["field"]!.GetValue<string>()));
        }

        var typo = TestApp.ProjectJson();
        typo["targetEror"] = 0.1;
        await Api.ProblemAsync(await admin.PostAsJsonAsync("/api/v1/projects", typo), 400);
    }

    [Fact]
    public async Task Items_upsert_by_id_and_report_counts()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var url = $"/api/v1/projects/{keys.ProjectId}/items";
        var first = await Api.JsonAsync(await owner.PostAsync(url, Api.Jsonl(TestApp.ItemsJsonl(4, 2))), 200);
        Assert.Equal(6, first["created"]!.GetValue<int>());
        var changed = TestApp.ItemsJsonl(4, 2).Replace("below 10", "under ten", StringComparison.Ordinal);
        var second = await Api.JsonAsync(await owner.PostAsync(url, Api.Jsonl(changed)), 200);
        Assert.Equal(0, second["created"]!.GetValue<int>());
        // x = 0, 5 (teach) and 0.5 (test) carry the changed explanation.
        Assert.Equal(3, second["updated"]!.GetValue<int>());
        Assert.Equal(3, second["unchanged"]!.GetValue<int>());
        Assert.Equal(4, second["total"]!["teach"]!.GetValue<int>());
        Assert.Equal(2, second["total"]!["test"]!.GetValue<int>());
    }

    [Fact]
    public async Task Every_invalid_line_is_reported_and_nothing_is_stored()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var body = TestApp.Item("a", "teach", 1) + "\n"
            + """{"id":"b","pool":"teach","label":"maybe","features":{"x":2},"content":{"text":"x"}}""" + "\n"
            + "{not json\n"
            + """{"id":"d","pool":"sideways","label":"sound","features":{"x":2},"content":{"text":"x"}}""" + "\n";
        var problem = await Api.ProblemAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(body)), 422);
        var lines = problem["errors"]!.AsArray().Select(e => e!["line"]!.GetValue<int>()).Distinct().Order().ToList();
        Assert.Equal([2, 3, 4], lines);
        var project = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}"), 200);
        Assert.Equal(0, project["items"]!["teach"]!.GetValue<int>());
    }

    [Fact]
    public async Task Csv_and_json_array_uploads_are_accepted()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var csv = "id,pool,label,text,f:x\nc1,teach,sound,x=1,1\nc2,test,defect,x=12,12\n";
        var fromCsv = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items",
            new StringContent(csv, Encoding.UTF8, "text/csv")), 200);
        Assert.Equal(2, fromCsv["created"]!.GetValue<int>());
        var array = "[" + TestApp.Item("j1", "teach", 3) + "," + TestApp.Item("j2", "test", 15) + "]";
        var fromArray = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.RawJson(array)), 200);
        Assert.Equal(2, fromArray["created"]!.GetValue<int>());
    }

    [Fact]
    public async Task Upload_limits_answer_413_and_422_and_wrong_media_type_415()
    {
        using var app = new TestApp(new()
        {
            ["TeachServe:Uploads:MaxUploadBytes"] = "2000",
            ["TeachServe:Uploads:MaxItemsPerUpload"] = "3",
            ["TeachServe:Uploads:MaxItemsPerProject"] = "3",
        });
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var url = $"/api/v1/projects/{keys.ProjectId}/items";
        await Api.ProblemAsync(await owner.PostAsync(url, Api.Jsonl(TestApp.ItemsJsonl(20, 20))), 413);
        await Api.ProblemAsync(await owner.PostAsync(url, Api.Jsonl(TestApp.ItemsJsonl(3, 1))), 422);
        await Api.ProblemAsync(await owner.PostAsync(url, new StringContent("x", Encoding.UTF8, "text/plain")), 415);
    }

    [Fact]
    public async Task Versions_compile_inline_and_in_the_background()
    {
        using var app = new TestApp(new() { ["TeachServe:Compile:InlineMaxItems"] = "10" });
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(TestApp.ItemsJsonl(2, 8))), 200);
        var inline = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 201);
        Assert.Equal("ready", inline["status"]!.GetValue<string>());
        Assert.True(inline["summary"]!["hypotheses"]!.GetValue<int>() > 1);

        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(TestApp.ItemsJsonl(10, 10))), 200);
        var compiled = new TaskCompletionSource<int>(TaskCreationOptions.RunContinuationsAsynchronously);
        app.Service<Versions.VersionCompileQueue>().Compiled += (_, number) => compiled.TrySetResult(number);
        var queued = await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 202);
        Assert.Equal("compiling", queued["status"]!.GetValue<string>());
        Assert.Equal(2, await compiled.Task.WaitAsync(TimeSpan.FromSeconds(60)));
        var polled = await Api.JsonAsync(await owner.GetAsync($"/api/v1/projects/{keys.ProjectId}/versions/2"), 200);
        Assert.Equal("ready", polled["status"]!.GetValue<string>());
    }

    [Fact]
    public async Task A_project_without_test_items_cannot_be_compiled()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(TestApp.ItemsJsonl(4, 0))), 200);
        await Api.ProblemAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/versions", null), 422);
        await Api.ProblemAsync(await app.Client(keys.EmbedKey).PostAsJsonAsync($"/api/v1/projects/{keys.ProjectId}/sessions", new { workerRef = "w" }), 409);
    }
}
