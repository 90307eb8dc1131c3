using System.Net;
using System.Security.Cryptography;
using System.Text;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Persistence;
using System.Text.Json.Nodes;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Tests;

/// <summary>Compiles cannot be multiplied by one tenant: one per project at a time, slots per node, deduplicated, capped.</summary>
public sealed class CompileBoundsTests
{
    private static string Versions(TestApp.Keys keys) => $"/api/v1/projects/{keys.ProjectId}/versions";

    private static async Task UploadAsync(HttpClient owner, TestApp.Keys keys, string jsonl) =>
        await Api.JsonAsync(await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/items", Api.Jsonl(jsonl)), 200);

    /// <summary>One more teach item, so the snapshot differs from every earlier one.</summary>
    private static string ExtraItem(int n) => TestApp.Item($"t-extra{n:00}", "teach", 0.25 + n * 0.5) + "\n";

    [Fact]
    public async Task Twelve_concurrent_compiles_of_one_project_make_one_version_and_no_server_error()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        await UploadAsync(owner, keys, TestApp.ItemsJsonl());

        var responses = await Task.WhenAll(Enumerable.Range(0, 12).Select(_ => owner.PostAsync(Versions(keys), null)));

        var statuses = responses.Select(r => (int)r.StatusCode).ToList();
        Assert.All(statuses, s => Assert.Contains(s, new[] { 200, 201, 202, 409 }));
        Assert.Contains(statuses, s => s is 201 or 202);
        foreach (var r in responses.Where(r => r.StatusCode == HttpStatusCode.Conflict)) await Api.ProblemAsync(r, 409);
        // Every answer that names a version names the one that was created.
        var named = new List<int>();
        foreach (var r in responses.Where(r => (int)r.StatusCode is 200 or 201 or 202))
            named.Add((await Api.JsonAsync(r, (int)r.StatusCode))["version"]!.GetValue<int>());
        Assert.All(named, v => Assert.Equal(1, v));

        var list = (JsonArray)await Api.JsonAsync(await owner.GetAsync(Versions(keys)), 200);
        Assert.Single(list);
    }

    /// <summary>
    /// What several nodes do at once, below each node's own guard: twelve reservations on twelve database contexts,
    /// half with the same snapshot, half with snapshots of their own. The database lets exactly one through.
    /// </summary>
    [Fact]
    public async Task Twelve_reservations_at_once_from_separate_contexts_leave_exactly_one_compiling_row()
    {
        using var app = new TestApp();
        var keys = await app.CreateProjectAsync();
        await UploadAsync(app.Client(keys.OwnerKey), keys, TestApp.ItemsJsonl());
        VersionOperations.Snapshot snapshot;
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            snapshot = (await scope.ServiceProvider.GetRequiredService<VersionOperations>().ReadSnapshotAsync(await db.Projects.AsNoTracking().FirstAsync(p => p.Id == keys.ProjectId), default)).Value!;
        }

        var start = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
        var reservations = Enumerable.Range(0, 12).Select(i => Task.Run(async () =>
        {
            using var scope = app.Services.CreateScope();
            var own = i % 2 == 0 ? snapshot : snapshot with { Hash = Convert.ToHexStringLower(SHA256.HashData(Encoding.UTF8.GetBytes($"other-{i}"))) };
            await start.Task;
            return (Own: own.Hash, Result: await scope.ServiceProvider.GetRequiredService<VersionOperations>().ReserveAsync(keys.ProjectId, own, 100, default));
        })).ToList();
        start.SetResult();
        var results = await Task.WhenAll(reservations);

        var created = Assert.Single(results, r => r.Result.Kind == VersionOperations.ReservationKind.Created);
        Assert.Equal(1, created.Result.Record!.Number);
        foreach (var (own, result) in results.Where(r => r.Result.Kind != VersionOperations.ReservationKind.Created))
        {
            // Same snapshot as the winner: its version; another snapshot: busy with the winner's compile.
            var expected = own == created.Own ? VersionOperations.ReservationKind.Existing : VersionOperations.ReservationKind.Busy;
            Assert.Equal(expected, result.Kind);
            if (result.Record is { } record) Assert.Equal(1, record.Number);
        }
        using (var scope = app.Services.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            var rows = await db.ModelVersions.AsNoTracking().Where(v => v.ProjectId == keys.ProjectId).Select(v => v.Status).ToListAsync();
            Assert.Equal(VersionStatuses.Compiling, Assert.Single(rows));
        }
    }

    [Fact]
    public async Task A_compile_beyond_the_node_slots_is_queued_and_a_second_compile_of_the_project_waits_for_it()
    {
        using var app = new TestApp(new() { ["TeachServe:Compile:MaxConcurrent"] = "1" });
        var keys = await app.CreateProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        await UploadAsync(owner, keys, TestApp.ItemsJsonl());
        var slots = app.Service<CompileSlots>();
        var compiled = new TaskCompletionSource<int>(TaskCreationOptions.RunContinuationsAsynchronously);
        app.Service<VersionCompileQueue>().Compiled += (_, number) => compiled.TrySetResult(number);

        // Another compile holds the node's only slot: this small project is queued instead of compiled inline.
        Assert.True(slots.TryEnter());
        var queued = await owner.PostAsync(Versions(keys), null);
        Assert.Equal(HttpStatusCode.Accepted, queued.StatusCode);
        Assert.Equal($"{Versions(keys)}/1", queued.Headers.Location?.OriginalString);
        Assert.Equal("compiling", (await Api.JsonAsync(queued, 202))["status"]!.GetValue<string>());

        // The same snapshot again points at the running compile; a different one is refused while it runs.
        var same = await Api.JsonAsync(await owner.PostAsync(Versions(keys), null), 202);
        Assert.Equal(1, same["version"]!.GetValue<int>());
        await UploadAsync(owner, keys, ExtraItem(1));
        var busy = await owner.PostAsync(Versions(keys), null);
        var problem = await Api.ProblemAsync(busy, 409);
        Assert.Equal(1, problem["version"]!.GetValue<int>());
        Assert.NotNull(busy.Headers.RetryAfter);

        slots.Exit();
        Assert.Equal(1, await compiled.Task.WaitAsync(TimeSpan.FromSeconds(60)));
        Assert.Equal(0, slots.Running);
        var second = await Api.JsonAsync(await owner.PostAsync(Versions(keys), null), 201);
        Assert.Equal(2, second["version"]!.GetValue<int>());
        Assert.Equal(2, ((JsonArray)await Api.JsonAsync(await owner.GetAsync(Versions(keys)), 200)).Count);
    }

    [Fact]
    public async Task Compiling_identical_settings_and_items_returns_the_existing_version()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);

        var again = await owner.PostAsync(Versions(keys), null);
        var body = await Api.JsonAsync(again, 200);
        Assert.Equal(1, body["version"]!.GetValue<int>());
        Assert.Equal("ready", body["status"]!.GetValue<string>());
        Assert.Equal($"{Versions(keys)}/1", again.Headers.Location?.OriginalString);

        await UploadAsync(owner, keys, ExtraItem(1));
        Assert.Equal(2, (await Api.JsonAsync(await owner.PostAsync(Versions(keys), null), 201))["version"]!.GetValue<int>());
        Assert.Equal(2, ((JsonArray)await Api.JsonAsync(await owner.GetAsync(Versions(keys)), 200)).Count);
    }

    [Fact]
    public async Task Versions_per_project_are_capped_with_a_clear_conflict()
    {
        using var app = new TestApp(new() { ["TeachServe:Compile:MaxVersionsPerProject"] = "2" });
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        await UploadAsync(owner, keys, ExtraItem(1));
        await Api.JsonAsync(await owner.PostAsync(Versions(keys), null), 201);

        await UploadAsync(owner, keys, ExtraItem(2));
        var problem = await Api.ProblemAsync(await owner.PostAsync(Versions(keys), null), 409);
        Assert.Contains("MaxVersionsPerProject", problem["detail"]!.GetValue<string>());
        Assert.Equal(2, problem["limit"]!.GetValue<int>());
        Assert.Equal(2, ((JsonArray)await Api.JsonAsync(await owner.GetAsync(Versions(keys)), 200)).Count);
    }

    [Theory]
    [InlineData("Compile:MaxConcurrent")]
    [InlineData("Compile:MaxVersionsPerProject")]
    [InlineData("Cache:MaxModelVersions")]
    [InlineData("Cache:MaxSessionStates")]
    [InlineData("RateLimit:CredentialPermitLimit")]
    [InlineData("ForwardedHeaders:KnownProxies")]
    [InlineData("Webhooks:ConnectTimeout")]
    public void Bounds_are_validated_at_start(string setting)
    {
        var options = new Infrastructure.TeachServeOptions();
        Assert.True(new Infrastructure.TeachServeOptionsValidator().Validate(null, options).Succeeded);
        switch (setting)
        {
            case "Compile:MaxConcurrent": options.Compile.MaxConcurrent = 0; break;
            case "Compile:MaxVersionsPerProject": options.Compile.MaxVersionsPerProject = 0; break;
            case "Cache:MaxModelVersions": options.Cache.MaxModelVersions = 0; break;
            case "Cache:MaxSessionStates": options.Cache.MaxSessionStates = -1; break;
            case "RateLimit:CredentialPermitLimit": options.RateLimit.CredentialPermitLimit = 0; break;
            case "Webhooks:ConnectTimeout": options.Webhooks.ConnectTimeout = options.Webhooks.RequestTimeout + TimeSpan.FromSeconds(1); break;
            default: options.ForwardedHeaders.KnownProxies.AddRange(["10.0.0.5", "172.18.0.0/16", "not-an-address"]); break;
        }
        var result = new Infrastructure.TeachServeOptionsValidator().Validate(null, options);
        Assert.True(result.Failed);
        var failure = Assert.Single(result.Failures!);
        Assert.StartsWith($"TeachServe:{setting}", failure, StringComparison.Ordinal);
    }
}
