using System.Net;
using System.Net.Http.Headers;
using Microsoft.AspNetCore.Diagnostics;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.Data.Sqlite;
using Microsoft.Extensions.DependencyInjection;
using TeachServe.Server.Health;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Tests;

/// <summary>Requests anyone may send cost the server next to nothing: the OpenAPI document is built once, readiness is checked at most every two seconds.</summary>
public sealed class ProbeAndDocumentTests
{
    [Fact]
    public async Task The_openapi_document_is_built_once_whatever_the_host_query_or_key()
    {
        var builds = 0;
        using var app = new TestApp(services: s => s.Configure<OpenApiOptions>("v1", o => o.AddDocumentTransformer((_, _, _) =>
        {
            Interlocked.Increment(ref builds);
            return Task.CompletedTask;
        })));
        var client = app.Client();

        var first = await Task.WhenAll(Enumerable.Range(0, 8).Select(_ => client.GetStringAsync("/openapi/v1.json")));
        var varied = new List<string>();
        for (var i = 0; i < 6; i++)
        {
            using var request = new HttpRequestMessage(HttpMethod.Get, $"/openapi/v1.json?v={i}");
            request.Headers.Host = $"host{i}.example";
            request.Headers.Authorization = new AuthenticationHeaderValue("Bearer", $"tso.prj_x.guess{i}");
            var response = await client.SendAsync(request);
            Assert.Equal(HttpStatusCode.OK, response.StatusCode);
            varied.Add(await response.Content.ReadAsStringAsync());
        }

        Assert.Equal(1, Volatile.Read(ref builds));
        Assert.Contains("\"/api/v1/projects/{projectId}/versions\"", first[0]);
        Assert.All(first.Concat(varied), body => Assert.Equal(first[0], body));
    }

    [Fact]
    public async Task Readiness_is_checked_at_most_once_per_two_seconds_and_rate_limited_per_address()
    {
        using var app = new TestApp(new() { ["TeachServe:RateLimit:PermitLimit"] = "30" });
        var probe = app.Service<ReadinessProbe>();
        var client = app.Client();
        client.DefaultRequestHeaders.Add(TestApp.PeerHeader, "198.51.100.20");
        var before = probe.Checks;

        var burst = await Task.WhenAll(Enumerable.Range(0, 20).Select(_ => client.GetAsync("/readyz")));
        Assert.All(burst, r => Assert.Equal(HttpStatusCode.OK, r.StatusCode));
        Assert.Equal(before + 1, probe.Checks);

        app.Time.Advance(ReadinessProbe.Lifetime);
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/readyz")).StatusCode);
        Assert.Equal(before + 2, probe.Checks);

        // 21 of 30 used; the bucket is this address's own.
        var statuses = new List<HttpStatusCode>();
        for (var i = 0; i < 10; i++) statuses.Add((await client.GetAsync("/readyz")).StatusCode);
        Assert.Equal(HttpStatusCode.TooManyRequests, statuses[^1]);
        Assert.Equal(before + 2, probe.Checks);
        var other = app.Client();
        other.DefaultRequestHeaders.Add(TestApp.PeerHeader, "198.51.100.21");
        Assert.Equal(HttpStatusCode.OK, (await other.GetAsync("/readyz")).StatusCode);
    }

    [Fact]
    public async Task A_request_that_finds_the_database_unreachable_makes_the_next_readiness_probe_ask_again()
    {
        using var app = new TestApp();
        var probe = app.Service<ReadinessProbe>();
        var client = app.Client();
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/readyz")).StatusCode);
        var checks = probe.Checks;
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/readyz")).StatusCode);
        Assert.Equal(checks, probe.Checks);

        // What the pipeline does when a handler's query fails with SQLITE_BUSY.
        var handler = app.Services.GetServices<IExceptionHandler>().OfType<ProblemDetailsExceptionHandler>().Single();
        var http = new DefaultHttpContext { RequestServices = app.Services };
        http.Response.Body = new MemoryStream();
        Assert.True(await handler.TryHandleAsync(http, new SqliteException("database is locked", 5), CancellationToken.None));
        Assert.Equal(StatusCodes.Status503ServiceUnavailable, http.Response.StatusCode);

        // The cached "ready" is gone although the two seconds have not passed (the clock stands still here).
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/readyz")).StatusCode);
        Assert.Equal(checks + 1, probe.Checks);
    }
}
