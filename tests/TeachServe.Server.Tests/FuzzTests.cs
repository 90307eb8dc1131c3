using System.Diagnostics;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text;
using System.Text.Json.Nodes;
using Microsoft.Data.Sqlite;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Tests;

/// <summary>
/// Seeded hostile requests over every endpoint: malformed and mistyped JSON, deep nesting, large bodies,
/// invalid UTF-8, path tricks, injection strings in every field, other projects' ids and keys, expired and
/// forged tokens. Whatever arrives: no 5xx, nothing secret about test items in what annotators and strangers
/// get back, no read or write of project A with anything but A's keys (A's keys are never used), and the
/// database passes SQLite's integrity check afterwards.
/// </summary>
public sealed class FuzzTests
{
    private const int Requests = 10_000;

    [Fact]
    public async Task Ten_thousand_hostile_requests_get_no_5xx_leak_nothing_and_cross_no_project()
    {
        using var app = new TestApp(new Dictionary<string, string?> { ["TeachServe:RateLimit:PermitLimit"] = "1000000" });
        // Test items of both projects carry markers that no annotator-facing response may contain.
        var secretItems = ItemsWithSecrets();
        var a = await app.ReadyProjectAsync(items: secretItems);
        var b = await app.ReadyProjectAsync(items: secretItems);
        var aSession = await app.StartSessionAsync(a, "a-worker");
        var expired = await app.StartSessionAsync(b, "expired-worker");
        app.Time.Advance(TimeSpan.FromHours(5));
        var bSessions = new List<TestApp.StartedSession>();
        for (var i = 0; i < 3; i++) bSessions.Add(await app.StartSessionAsync(b, $"b-worker-{i}"));
        var aBefore = await EventsAsync(app, a);

        var random = new Random(20261201);
        var client = app.Client();
        var keysOfB = new[] { b.OwnerKey, b.EmbedKey, bSessions[0].Token, bSessions[1].Token };
        var strangers = new[]
        {
            expired.Token, "tst." + aSession.SessionId + ".forged", "tso." + a.ProjectId + ".forged", "tse." + a.ProjectId + ".x",
            "tsa.forged-admin-key-0123456789abcdef", "Bearer", "", "tst.." , new string('k', 300), "tso.prj_' OR 1=1 --.x",
            "tst." + bSessions[2].SessionId + "." + aSession.Token.Split('.')[2],
        };
        var statuses = new Dictionary<int, int>();
        var stopwatch = Stopwatch.StartNew();

        for (var n = 0; n < Requests; n++)
        {
            // Target project A (only with strangers' or B's keys) or B (with anything but A's keys).
            var targetA = random.Next(3) == 0;
            var project = targetA ? a.ProjectId : b.ProjectId;
            var session = targetA ? aSession.SessionId : Pick(random, bSessions).SessionId;
            var key = targetA || random.Next(4) == 0 ? Pick<string?>(random, [.. strangers, .. keysOfB, null]) : Pick(random, keysOfB);
            var (method, path) = Endpoint(random, project, session);
            using var request = new HttpRequestMessage(method, path);
            if (key is not null) request.Headers.TryAddWithoutValidation("Authorization", random.Next(20) == 0 ? key : "Bearer " + key);
            if (method != HttpMethod.Get && method != HttpMethod.Delete) request.Content = Body(random, path, project, session);

            using var response = await client.SendAsync(request);
            var status = (int)response.StatusCode;
            var text = await response.Content.ReadAsStringAsync();
            statuses[status] = statuses.GetValueOrDefault(status) + 1;
            var what = $"#{n} {method} {path} key={Describe(key, a, b)}: {status} {Clip(text)}";
            Assert.True(status < 500, what);
            if (targetA && path.Contains(a.ProjectId, StringComparison.Ordinal) | path.Contains(aSession.SessionId, StringComparison.Ordinal))
                Assert.True(status is 400 or 401 or 403 or 404 or 405 or 409 or 413 or 415 or 422 or 429, "project A was reached: " + what);
            if (key != b.OwnerKey)
                foreach (var marker in Secrets) Assert.DoesNotContain(marker, text, StringComparison.Ordinal);
            Assert.Equal("nosniff", Header(response, "X-Content-Type-Options"));
            Assert.Equal("no-referrer", Header(response, "Referrer-Policy"));
            Assert.Equal(SecurityHeaders.ApiPolicy, Header(response, "Content-Security-Policy"));
        }

        Assert.True(statuses.Keys.Count(s => s is >= 400 and < 500) >= 4, string.Join(", ", statuses.Select(s => $"{s.Key}×{s.Value}")));
        Assert.Contains(statuses.Keys, s => s is >= 200 and < 300);
        Assert.Equal(aBefore, await EventsAsync(app, a));
        // A's session is still where it was left: A's platform resumes it (its old token has expired meanwhile).
        var resumed = await Api.JsonAsync(await app.Client(a.EmbedKey).PostAsJsonAsync(
            $"/api/v1/projects/{a.ProjectId}/sessions", new { workerRef = "a-worker", resume = true }), 200);
        Assert.Equal(aSession.SessionId, resumed["sessionId"]!.GetValue<string>());
        var next = await Api.JsonAsync(await app.Client(resumed["token"]!.GetValue<string>()).GetAsync($"/api/v1/sessions/{aSession.SessionId}/next"), 200);
        Assert.Equal(0, next["step"]!.GetValue<int>());

        if (app.PostgresConnectionString is { } postgres)
        {
            // PostgreSQL's amcheck verifies every B-tree index of our tables against its heap; it throws on corruption.
            await using var pg = new Npgsql.NpgsqlConnection(postgres);
            await pg.OpenAsync();
            await using var check = pg.CreateCommand();
            check.CommandText = """
                CREATE EXTENSION IF NOT EXISTS amcheck;
                SELECT count(bt_index_check(c.oid, true)) FROM pg_index i
                JOIN pg_class c ON c.oid = i.indexrelid JOIN pg_namespace n ON n.oid = c.relnamespace
                JOIN pg_am am ON am.oid = c.relam WHERE n.nspname = 'public' AND am.amname = 'btree'
                """;
            Assert.True(Convert.ToInt64(await check.ExecuteScalarAsync(), System.Globalization.CultureInfo.InvariantCulture) > 0);
        }
        else
        {
            await using var db = new SqliteConnection($"Data Source={Path.Combine(app.DataDirectory, "teachserve.db")};Mode=ReadOnly");
            await db.OpenAsync();
            await using var check = db.CreateCommand();
            check.CommandText = "PRAGMA integrity_check";
            Assert.Equal("ok", (string?)await check.ExecuteScalarAsync());
        }
        Assert.True(stopwatch.Elapsed < TimeSpan.FromMinutes(2), $"took {stopwatch.Elapsed}");
    }

    private static readonly string[] Secrets = ["SECRET-EXPLANATION", "secret-test-item"];

    private static string ItemsWithSecrets()
    {
        var lines = new StringBuilder();
        for (var i = 0; i < 20; i++) lines.Append(TestApp.Item($"t{i:00}", "teach", i)).Append('\n');
        for (var i = 0; i < 20; i++)
        {
            var item = JsonNode.Parse(TestApp.Item($"secret-test-item-{i:00}", "test", i + 0.5))!;
            item["explanation"] = $"SECRET-EXPLANATION {i}";
            lines.Append(item.ToJsonString()).Append('\n');
        }
        return lines.ToString();
    }

    private static async Task<string> EventsAsync(TestApp app, TestApp.Keys keys) =>
        await app.Client(keys.OwnerKey).GetStringAsync($"/api/v1/projects/{keys.ProjectId}/events");

    private static T Pick<T>(Random random, IReadOnlyList<T> from) => from[random.Next(from.Count)];

    private static readonly string[] Nasty =
    [
        "' OR '1'='1", "'; DROP TABLE Sessions; --", "\" OR 1=1 --", "<script>alert(1)</script>", "<img src=x onerror=alert(1)>",
        "../../etc/passwd", "%00", "\u0000", "\u202e", "😀", "null", "{{7*7}}", "${jndi:ldap://127.0.0.1/x}", "%2e%2e%2f",
        new string('a', 5000), "", " ", "\r\n\r\nX-Injected: 1", "itm_", "tst.x.y", "sound", "defect", "-1", "1e309",
    ];

    /// <summary>A path segment; Kestrel refuses a NUL in a path with 400 before routing, and the in-memory host cannot send one.</summary>
    private static string Segment(string s) => Uri.EscapeDataString(s).Replace("%00", "%2500", StringComparison.Ordinal);

    private static (HttpMethod, string) Endpoint(Random random, string project, string session)
    {
        var id = random.Next(6) switch
        {
            0 => Segment(Pick(random, Nasty)),
            1 => "..%2f..%2f" + project,
            2 => project + "%20",
            _ => project,
        };
        var sid = random.Next(6) == 0 ? Segment(Pick(random, Nasty)) : session;
        var paths = new (HttpMethod, string)[]
        {
            (HttpMethod.Post, "/api/v1/projects"),
            (HttpMethod.Get, $"/api/v1/projects/{id}"),
            (HttpMethod.Patch, $"/api/v1/projects/{id}"),
            (HttpMethod.Post, $"/api/v1/projects/{id}/items"),
            (HttpMethod.Post, $"/api/v1/projects/{id}/versions"),
            (HttpMethod.Get, $"/api/v1/projects/{id}/versions"),
            (HttpMethod.Get, $"/api/v1/projects/{id}/versions/{random.Next(-2, 4)}"),
            (HttpMethod.Post, $"/api/v1/projects/{id}/sessions"),
            (HttpMethod.Get, $"/api/v1/projects/{id}/sessions?phase={Segment(Pick(random, Nasty))}&cursor={Segment(Pick(random, Nasty))}&limit={random.Next(-5, 5000)}"),
            (HttpMethod.Get, $"/api/v1/sessions/{sid}/next"),
            (HttpMethod.Post, $"/api/v1/sessions/{sid}/answers"),
            (HttpMethod.Post, $"/api/v1/sessions/{sid}/answers"),
            (HttpMethod.Post, $"/api/v1/sessions/{sid}/answers"),
            (HttpMethod.Get, $"/api/v1/sessions/{sid}"),
            (HttpMethod.Get, $"/api/v1/projects/{id}/releases?after={Segment(Pick(random, Nasty))}"),
            (HttpMethod.Get, $"/api/v1/projects/{id}/events?after={random.Next(-3, 50)}"),
            (HttpMethod.Get, $"/api/v1/projects/{id}/audit"),
            (HttpMethod.Delete, $"/api/v1/projects/{id}/workers/{Segment(Pick(random, Nasty))}"),
            (HttpMethod.Get, "/healthz"),
            (HttpMethod.Get, "/readyz"),
            (HttpMethod.Get, "/api/v1/" + Segment(Pick(random, Nasty))),
            (HttpMethod.Put, $"/api/v1/sessions/{sid}/answers"),
        };
        return Pick(random, paths);
    }

    private static ByteArrayContent Body(Random random, string path, string project, string session)
    {
        JsonNode Value() => random.Next(9) switch
        {
            0 => JsonValue.Create(random.Next(int.MinValue, int.MaxValue)),
            1 => JsonValue.Create(random.NextDouble() * 1e300),
            2 => JsonValue.Create(random.Next(2) == 0),
            3 => new JsonArray(JsonValue.Create(Pick(random, Nasty))),
            4 => new JsonObject { [Pick(random, Nasty)] = Pick(random, Nasty) },
            5 => JsonValue.Create(project)!,
            6 => JsonValue.Create("itm_" + Convert.ToBase64String(Guid.NewGuid().ToByteArray()))!,
            _ => JsonValue.Create(Pick(random, Nasty))!,
        };
        JsonObject Shaped()
        {
            var fields = path.EndsWith("/answers", StringComparison.Ordinal) ? new[] { "step", "itemRef", "label" }
                : path.EndsWith("/sessions", StringComparison.Ordinal) ? new[] { "workerRef" }
                : new[] { "name", "labels", "family", "policy", "gate", "releaseWebhook" };
            var o = new JsonObject();
            foreach (var f in fields) if (random.Next(5) > 0) o[f] = f switch
            {
                "step" when random.Next(2) == 0 => random.Next(-2, 5),
                "label" when random.Next(2) == 0 => Pick(random, ["sound", "defect"]),
                "workerRef" when random.Next(2) == 0 => "fuzz-" + random.Next(1000),
                _ => Value(),
            };
            if (random.Next(4) == 0) o[Pick(random, Nasty)] = Value();
            return o;
        }
        var kind = random.Next(12);
        var bytes = kind switch
        {
            0 => Encoding.UTF8.GetBytes(Truncated(Shaped().ToJsonString(), random.Next(1, 20))),
            1 => Encoding.UTF8.GetBytes(new string('[', 2000) + new string(']', 2000)), // deep nesting
            2 => [0xC3, 0x28, 0x7B, 0xFF, 0xFE, 0x22, 0x80, 0x22], // invalid UTF-8
            3 => Encoding.UTF8.GetBytes("{\"step\":0,\"itemRef\":\"" + new string('x', random.Next(20_000, 600_000)) + "\",\"label\":\"sound\"}"),
            4 => Encoding.UTF8.GetBytes(string.Join('\n', Enumerable.Range(0, 5).Select(_ => Shaped().ToJsonString()))), // NDJSON-ish
            5 => Encoding.UTF8.GetBytes("id,pool,label\n" + Pick(random, Nasty) + ",teach,sound\n"),
            6 => [],
            _ => Encoding.UTF8.GetBytes(Shaped().ToJsonString()),
        };
        var content = new ByteArrayContent(bytes);
        content.Headers.ContentType = random.Next(10) switch
        {
            0 => new MediaTypeHeaderValue("text/csv"),
            1 => new MediaTypeHeaderValue("application/x-ndjson"),
            2 => new MediaTypeHeaderValue("text/plain"),
            3 => null,
            _ => new MediaTypeHeaderValue("application/json"),
        };
        return content;
    }

    private static string? Header(HttpResponseMessage response, string name) =>
        response.Headers.TryGetValues(name, out var v) ? string.Join(",", v) : null;

    private static string Truncated(string json, int length) => json[..Math.Min(json.Length - 1, length)];

    private static string Describe(string? key, TestApp.Keys a, TestApp.Keys b) =>
        key is null ? "none" : key == b.OwnerKey ? "B owner" : key == b.EmbedKey ? "B embed" : key.Length > 30 ? key[..30] : key;

    private static string Clip(string s) => s.Length <= 300 ? s : s[..300];
}
