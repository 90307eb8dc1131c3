using System.Net.Http.Json;
using System.Text.Json.Nodes;

namespace TeachServe.Server.Tests;

public sealed class ProjectKeysTests
{
    private static Task<HttpResponseMessage> ReadProject(HttpClient client, string projectId) => client.GetAsync($"/api/v1/projects/{projectId}");

    private static Task<HttpResponseMessage> StartSession(HttpClient client, string projectId, string workerRef) =>
        client.PostAsJsonAsync($"/api/v1/projects/{projectId}/sessions", new { workerRef });

    [Fact]
    public async Task Rotating_the_embed_key_ends_the_old_one_at_once_and_the_new_one_works_once_shown()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var rotated = await Api.JsonAsync(await app.Client(keys.OwnerKey).PostAsync($"/api/v1/projects/{keys.ProjectId}/keys/embed/rotation", null), 200);
        var newKey = rotated["key"]!.GetValue<string>();
        Assert.NotEqual(keys.EmbedKey, newKey);
        Assert.StartsWith($"tse.{keys.ProjectId}.", newKey, StringComparison.Ordinal);

        await Api.ProblemAsync(await StartSession(app.Client(keys.EmbedKey), keys.ProjectId, "w-old"), 401);
        await Api.JsonAsync(await StartSession(app.Client(newKey), keys.ProjectId, "w-new"), 201);
        // The owner key is untouched, and the project view never shows a key.
        var view = await Api.JsonAsync(await ReadProject(app.Client(keys.OwnerKey), keys.ProjectId), 200);
        Assert.DoesNotContain(newKey, view.ToJsonString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Rotating_the_owner_key_ends_the_old_one_and_an_admin_can_replace_a_lost_one()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var byOwner = await Api.JsonAsync(await app.Client(keys.OwnerKey).PostAsync($"/api/v1/projects/{keys.ProjectId}/keys/owner/rotation", null), 200);
        var second = byOwner["key"]!.GetValue<string>();
        await Api.ProblemAsync(await ReadProject(app.Client(keys.OwnerKey), keys.ProjectId), 401);
        await Api.JsonAsync(await ReadProject(app.Client(second), keys.ProjectId), 200);

        // The second key is lost: the admin rotates it.
        var byAdmin = await Api.JsonAsync(await app.Client(TestApp.AdminKey).PostAsync($"/api/v1/projects/{keys.ProjectId}/keys/owner/rotation", null), 200);
        var third = byAdmin["key"]!.GetValue<string>();
        await Api.ProblemAsync(await ReadProject(app.Client(second), keys.ProjectId), 401);
        await Api.JsonAsync(await ReadProject(app.Client(third), keys.ProjectId), 200);

        var audit = await Api.JsonAsync(await app.Client(third).GetAsync($"/api/v1/projects/{keys.ProjectId}/audit"), 200);
        var entries = audit["entries"]!.AsArray().Select(e => (e!["action"]!.GetValue<string>(), e["subjectHash"]!.GetValue<string>(), e["details"]!["by"]!.GetValue<string>())).ToList();
        Assert.Equal([("key.rotated", "key:owner", "owner"), ("key.rotated", "key:owner", "admin")], entries);
        Assert.DoesNotContain(second, audit.ToJsonString(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_revoked_embed_key_works_nowhere_until_rotated_and_running_sessions_go_on()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var session = await app.StartSessionAsync(keys, "w-running");

        var revoke = await app.Client(keys.OwnerKey).DeleteAsync($"/api/v1/projects/{keys.ProjectId}/keys/embed");
        Assert.Equal(System.Net.HttpStatusCode.NoContent, revoke.StatusCode);
        await Api.ProblemAsync(await StartSession(app.Client(keys.EmbedKey), keys.ProjectId, "w-after"), 401);
        // The annotator already onboarding keeps their own token.
        await Api.JsonAsync(await session.Annotator.GetAsync($"/api/v1/sessions/{session.SessionId}/next"), 200);

        var rotated = await Api.JsonAsync(await app.Client(keys.OwnerKey).PostAsync($"/api/v1/projects/{keys.ProjectId}/keys/embed/rotation", null), 200);
        await Api.JsonAsync(await StartSession(app.Client(rotated["key"]!.GetValue<string>()), keys.ProjectId, "w-after"), 201);
        var audit = await Api.JsonAsync(await app.Client(keys.OwnerKey).GetAsync($"/api/v1/projects/{keys.ProjectId}/audit"), 200);
        Assert.Equal(["key.revoked", "key.rotated"], audit["entries"]!.AsArray().Select(e => e!["action"]!.GetValue<string>()));
    }

    [Fact]
    public async Task A_rotation_on_one_node_holds_on_another_at_the_next_request()
    {
        // Two server instances on one database, as two nodes are: neither keeps key hashes in memory.
        var dir = TestApp.NewDataDirectory();
        using (var first = new TestApp(dataDirectory: dir))
        {
            var keys = await first.ReadyProjectAsync();
            using var second = new TestApp(dataDirectory: dir);
            await Api.JsonAsync(await ReadProject(second.Client(keys.OwnerKey), keys.ProjectId), 200);

            var rotated = await Api.JsonAsync(await first.Client(keys.OwnerKey).PostAsync($"/api/v1/projects/{keys.ProjectId}/keys/owner/rotation", null), 200);
            await Api.ProblemAsync(await ReadProject(second.Client(keys.OwnerKey), keys.ProjectId), 401);
            await Api.JsonAsync(await ReadProject(second.Client(rotated["key"]!.GetValue<string>()), keys.ProjectId), 200);
        }
        Microsoft.Data.Sqlite.SqliteConnection.ClearAllPools();
        Directory.Delete(dir, recursive: true);
    }

    [Theory]
    [InlineData("post", "session", 400)]
    [InlineData("post", "admin", 400)]
    [InlineData("delete", "everything", 400)]
    public async Task Only_owner_and_embed_keys_can_be_rotated_or_revoked(string method, string kind, int status)
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var response = method == "post"
            ? await owner.PostAsync($"/api/v1/projects/{keys.ProjectId}/keys/{kind}/rotation", null)
            : await owner.DeleteAsync($"/api/v1/projects/{keys.ProjectId}/keys/{kind}");
        var problem = await Api.ProblemAsync(response, status);
        Assert.Contains("'owner' or 'embed'", problem["detail"]!.GetValue<string>(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Another_projects_keys_and_the_embed_key_cannot_rotate()
    {
        using var app = new TestApp();
        var a = await app.ReadyProjectAsync();
        var b = await app.ReadyProjectAsync();
        await Api.ProblemAsync(await app.Client(b.OwnerKey).PostAsync($"/api/v1/projects/{a.ProjectId}/keys/embed/rotation", null), 404);
        await Api.ProblemAsync(await app.Client(a.EmbedKey).PostAsync($"/api/v1/projects/{a.ProjectId}/keys/embed/rotation", null), 403);
        await Api.ProblemAsync(await app.Client(a.EmbedKey).DeleteAsync($"/api/v1/projects/{a.ProjectId}/keys/owner"), 403);
        // Nothing changed.
        await Api.JsonAsync(await StartSession(app.Client(a.EmbedKey), a.ProjectId, "w"), 201);
        await Api.JsonAsync(await ReadProject(app.Client(a.OwnerKey), a.ProjectId), 200);
    }
}
