using System.Net.Http.Json;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Http;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Auth;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Tests;

/// <summary>
/// The session row read by the token check travels to the session operations as a request feature, so an annotator
/// request reads the row once; a row that this node has since moved past is read again.
/// </summary>
public sealed class SessionRowFeatureTests
{
    [Fact]
    public async Task A_session_token_check_carries_the_row_it_read_and_an_owner_key_carries_none()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);

        // One scope per request, as the server has: the authentication handler keeps its result for the request.
        using var first = app.Services.CreateScope();
        using var second = app.Services.CreateScope();
        using var third = app.Services.CreateScope();
        var annotator = await AuthenticateAsync(first, s.Token);
        Assert.True(annotator.Result.Succeeded);
        var row = SessionRowFeature.Of(annotator.Http);
        Assert.NotNull(row);
        Assert.Equal(s.SessionId, row.Id);
        Assert.Equal(keys.ProjectId, row.ProjectId);
        Assert.Equal(0, row.Step);

        var owner = await AuthenticateAsync(second, keys.OwnerKey);
        Assert.True(owner.Result.Succeeded);
        Assert.Null(SessionRowFeature.Of(owner.Http));
        var wrong = await AuthenticateAsync(third, s.Token + "x");
        Assert.False(wrong.Result.Succeeded);
        Assert.Null(SessionRowFeature.Of(wrong.Http));
    }

    [Fact]
    public async Task The_operations_use_the_carried_row_instead_of_reading_it_again()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var stored = await db.Sessions.AsNoTracking().SingleAsync(x => x.Id == s.SessionId);

        // A carried row that differs from the stored one only where nothing else would say so: it is the one used.
        stored.IsActive = false;
        var next = await scope.ServiceProvider.GetRequiredService<SessionOperations>().NextAsync(s.SessionId, stored, "http://test", CancellationToken.None);
        Assert.NotNull(next.Value);
        Assert.Null(next.Value.Item);
    }

    [Fact]
    public async Task A_carried_row_this_node_has_moved_past_or_of_another_session_is_read_again()
    {
        using var app = new TestApp();
        var keys = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var other = await app.StartSessionAsync(keys, "worker-2");
        using var scope = app.Services.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var atStart = await db.Sessions.AsNoTracking().SingleAsync(x => x.Id == s.SessionId);
        var otherRow = await db.Sessions.AsNoTracking().SingleAsync(x => x.Id == other.SessionId);

        var first = await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{s.SessionId}/next"), 200);
        var label = TestApp.TruthOf(first["item"]!);
        await Api.JsonAsync(await s.Annotator.PostAsJsonAsync($"/api/v1/sessions/{s.SessionId}/answers",
            new { step = 0, itemRef = first["item"]!["ref"]!.GetValue<string>(), label }), 200);

        var sessions = scope.ServiceProvider.GetRequiredService<SessionOperations>();
        var stale = await sessions.NextAsync(s.SessionId, atStart, "http://test", CancellationToken.None);
        Assert.Equal(1, stale.Value!.Step);
        var mismatched = await sessions.NextAsync(s.SessionId, otherRow, "http://test", CancellationToken.None);
        Assert.Equal(1, mismatched.Value!.Step);

        // Answering with the stale row gets the stored response of step 0, as a retry over HTTP would.
        var retry = await sessions.AnswerAsync(s.SessionId,
            new AnswerRequest { Step = 0, ItemRef = first["item"]!["ref"]!.GetValue<string>(), Label = label }, atStart, CancellationToken.None);
        Assert.Equal(1, retry.Value!.Step);
    }

    private static async Task<(AuthenticateResult Result, HttpContext Http)> AuthenticateAsync(IServiceScope scope, string key)
    {
        var http = new DefaultHttpContext { RequestServices = scope.ServiceProvider };
        http.Request.Headers.Authorization = $"Bearer {key}";
        var result = await http.AuthenticateAsync(KeyAuthenticationHandler.SchemeName);
        return (result, http);
    }
}
