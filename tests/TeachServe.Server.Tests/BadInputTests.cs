using System.Net.Http.Headers;
using System.Text;

namespace TeachServe.Server.Tests;

/// <summary>A battery of malformed, mistyped, oversized, out-of-range and foreign requests: each gets a 4xx problem, none a 5xx.</summary>
public sealed class BadInputTests
{
    [Fact]
    public async Task Hundreds_of_bad_requests_get_4xx_problem_details_and_never_5xx()
    {
        using var app = new TestApp(new() { ["TeachServe:RateLimit:PermitLimit"] = "100000" });
        var keys = await app.ReadyProjectAsync();
        var other = await app.ReadyProjectAsync();
        var s = await app.StartSessionAsync(keys);
        var otherSession = await app.StartSessionAsync(other);
        var p = keys.ProjectId;
        var sid = s.SessionId;
        var huge = new string('x', 300_000);

        var jsonBodies = new[]
        {
            "", "{", "}", "[", "null", "42", "\"text\"", "[]", "{\"a\":", "{'single':1}", "{\"workerRef\":}", "{\"workerRef\":null}",
            "{\"workerRef\":42}", "{\"workerRef\":true}", "{\"workerRef\":[]}", "{\"workerRef\":{}}", "{\"workerRef\":\"\"}",
            $"{{\"workerRef\":\"{huge}\"}}", "{\"workerRef\":\"a\",\"extra\":1}", "{\"workerRef\":\"a\u0001b\"}", "{\"other\":1}",
            "{\"step\":0}", "{\"step\":\"0\",\"itemRef\":\"x\",\"label\":\"sound\"}", "{\"step\":-1,\"itemRef\":\"x\",\"label\":\"sound\"}",
            "{\"step\":1e10,\"itemRef\":\"x\",\"label\":\"sound\"}", "{\"step\":99999999999,\"itemRef\":\"x\",\"label\":\"sound\"}",
            "{\"step\":0.5,\"itemRef\":\"x\",\"label\":\"sound\"}", "{\"step\":0,\"itemRef\":null,\"label\":\"sound\"}",
            "{\"step\":0,\"itemRef\":\"x\",\"label\":null}", "{\"step\":0,\"itemRef\":\"x\",\"label\":42}",
            $"{{\"step\":0,\"itemRef\":\"x\",\"label\":\"{huge}\"}}", "{\"step\":0,\"itemRef\":\"x\",\"label\":\"sound\",\"correct\":true}",
            "{\"name\":\"x\"}", "{\"name\":1,\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"}}",
            "{\"name\":\"x\",\"labels\":\"ab\",\"family\":{\"kind\":\"stumps\"}}", "{\"name\":\"x\",\"labels\":[\"a\",\"a\"],\"family\":{\"kind\":\"stumps\"}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"magic\"}}", "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"gate\":{\"targetError\":-1}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"gate\":{\"maxTeachingItems\":-5}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"gate\":{\"maxTeachingItems\":2000000000}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"policy\":\"psychic\"}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"releaseWebhook\":{\"url\":\"ftp://x\",\"secret\":\"0123456789abcdefgh\"}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"releaseWebhook\":{\"url\":\"http://x/\",\"secret\":\"whsec_c2hvcnQ=\"}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"releaseWebhook\":{\"url\":\"http://x/\",\"secret\":\"a-plain-password-0123456789\"}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"learner\":{\"alpha\":1e308}}",
            "{\"name\":\"x\",\"labels\":[\"a\",\"b\"],\"family\":{\"kind\":\"stumps\"},\"learner\":{\"lapse\":2}}",
            new string('[', 100) + new string(']', 100), "{\"gate\":{\"targetError\":\"high\"}}", "{\"labels\":null}",
        };
        var itemBodies = new[]
        {
            "", "\n\n", "{}", "not json", "{\"id\":\"a\"}", "{\"id\":\"a\",\"pool\":\"teach\",\"label\":\"nope\",\"content\":{\"text\":\"x\"},\"features\":{\"x\":1}}",
            "{\"id\":\"a\",\"pool\":\"mid\",\"label\":\"sound\",\"content\":{\"text\":\"x\"},\"features\":{\"x\":1}}",
            "{\"id\":\"\",\"pool\":\"teach\",\"label\":\"sound\",\"content\":{\"text\":\"x\"},\"features\":{\"x\":1}}",
            $"{{\"id\":\"{huge}\",\"pool\":\"teach\",\"label\":\"sound\",\"content\":{{\"text\":\"x\"}},\"features\":{{\"x\":1}}}}",
            "{\"id\":\"a\",\"pool\":\"teach\",\"label\":\"sound\",\"content\":{\"text\":\"x\"},\"features\":{\"x\":\"one\"}}",
            "{\"id\":\"a\",\"pool\":\"teach\",\"label\":\"sound\",\"content\":{\"text\":\"x\"},\"features\":{\"x\":1e400}}",
            "{\"id\":\"a\",\"pool\":\"teach\",\"label\":\"sound\",\"content\":{\"text\":\"x\"},\"features\":{\"x\":1e300}}",
            "{\"id\":\"a\",\"pool\":\"teach\",\"label\":\"sound\",\"content\":{},\"features\":{\"x\":1}}",
            "{\"id\":\"a\",\"pool\":\"teach\",\"label\":\"sound\",\"content\":{\"text\":\"x\"},\"features\":{\"x\":1},\"unknown\":1}",
            "[1,2,3]", "\"x\"", "{\"id\":5,\"pool\":\"teach\",\"label\":\"sound\",\"content\":{\"text\":\"x\"}}",
        };
        var ids = new[] { "x", "prj_", "prj_!!!", "prj_0000000000000000", other.ProjectId, "%00", "..%2f..%2fetc", new string('a', 5000), "ses_x", "null" };

        var requests = new List<Func<Task<HttpResponseMessage>>>();
        var embed = app.Client(keys.EmbedKey);
        var owner = app.Client(keys.OwnerKey);
        var admin = app.Client(TestApp.AdminKey);
        foreach (var body in jsonBodies)
        {
            requests.Add(() => embed.PostAsync($"/api/v1/projects/{p}/sessions", Api.RawJson(body)));
            requests.Add(() => s.Annotator.PostAsync($"/api/v1/sessions/{sid}/answers", Api.RawJson(body)));
            requests.Add(() => admin.PostAsync("/api/v1/projects", Api.RawJson(body)));
        }
        var patches = new[]
        {
            "", "[", "[]", "42", "\"x\"", "{\"labels\":[\"only\"]}", "{\"labels\":[\"a\",\"b\"]}", "{\"gate\":{\"targetError\":7}}",
            "{\"gate\":{\"test\":{\"mode\":\"vibes\"}}}", "{\"family\":null}", "{\"name\":null}", "{\"bogus\":1}",
            "{\"releaseWebhook\":{\"url\":\"nope\",\"secret\":\"0123456789abcdefgh\"}}", "{\"releaseWebhook\":{\"url\":\"http://a/\"}}",
            $"{{\"name\":\"{huge}\"}}", "{\"learner\":{\"alpha\":-1}}", "{\"blendWeight\":1e300}",
        };
        foreach (var body in patches)
            requests.Add(() => owner.PatchAsync($"/api/v1/projects/{p}", Api.RawJson(body)));
        foreach (var body in itemBodies)
        {
            requests.Add(() => owner.PostAsync($"/api/v1/projects/{p}/items", Api.Jsonl(body)));
            requests.Add(() => owner.PostAsync($"/api/v1/projects/{p}/items", Api.RawJson(body)));
            requests.Add(() => owner.PostAsync($"/api/v1/projects/{p}/items", new StringContent(body, Encoding.UTF8, "text/csv")));
        }
        foreach (var id in ids)
        {
            var e = Uri.EscapeDataString(id);
            requests.Add(() => owner.GetAsync($"/api/v1/projects/{e}"));
            requests.Add(() => owner.GetAsync($"/api/v1/projects/{e}/versions/1"));
            requests.Add(() => owner.PostAsync($"/api/v1/projects/{e}/items", Api.Jsonl(TestApp.Item("a", "teach", 1))));
            requests.Add(() => embed.PostAsync($"/api/v1/projects/{e}/sessions", Api.RawJson("{\"workerRef\":\"w\"}")));
            requests.Add(() => s.Annotator.GetAsync($"/api/v1/sessions/{e}/next"));
            requests.Add(() => s.Annotator.GetAsync($"/api/v1/sessions/{e}"));
            requests.Add(() => owner.DeleteAsync($"/api/v1/projects/{p}/workers/{e}x{new string('w', 300)}"));
        }
        var queries = new[]
        {
            $"/api/v1/projects/{p}/releases?after=!!", $"/api/v1/projects/{p}/releases?after=LTE", $"/api/v1/projects/{p}/releases?limit=0",
            $"/api/v1/projects/{p}/releases?limit=-3", $"/api/v1/projects/{p}/releases?limit=abc", $"/api/v1/projects/{p}/releases?limit=99999999999",
            $"/api/v1/projects/{p}/sessions?phase=sleeping", $"/api/v1/projects/{p}/sessions?cursor=%%%", $"/api/v1/projects/{p}/sessions?limit=100000",
            $"/api/v1/projects/{p}/events?after=-1", $"/api/v1/projects/{p}/events?after=abc", $"/api/v1/projects/{p}/versions/-1",
            $"/api/v1/projects/{p}/versions/abc", $"/api/v1/projects/{p}/versions/99999999999", $"/api/v1/projects/{p}/audit?cursor=zz",
            $"/api/v1/projects/{other.ProjectId}/releases", $"/api/v1/projects/{other.ProjectId}/events", $"/api/v1/projects/{other.ProjectId}/sessions",
            $"/api/v1/sessions/{otherSession.SessionId}/next", $"/api/v1/sessions/{otherSession.SessionId}",
        };
        foreach (var q in queries)
        {
            requests.Add(() => owner.GetAsync(q));
            requests.Add(() => embed.GetAsync(q));
            requests.Add(() => s.Annotator.GetAsync(q));
        }
        var noKey = app.Client();
        var badKeys = new[] { "", "Bearer", "Basic abc", "Bearer tso.", "Bearer tso.prj_.x", "Bearer tst.ses_zzzz.x", $"Bearer {huge[..1000]}", "Bearer tsa.x.y.z" };
        foreach (var header in badKeys)
        {
            requests.Add(() =>
            {
                var r = new HttpRequestMessage(HttpMethod.Get, $"/api/v1/projects/{p}");
                r.Headers.TryAddWithoutValidation("Authorization", header);
                return noKey.SendAsync(r);
            });
        }
        requests.Add(() => embed.PostAsync($"/api/v1/projects/{p}/sessions", new StringContent("{\"workerRef\":\"w\"}", Encoding.UTF8, "text/plain")));
        requests.Add(() => s.Annotator.PostAsync($"/api/v1/sessions/{sid}/answers", new ByteArrayContent([0xff, 0xfe, 0x00]) { Headers = { ContentType = new MediaTypeHeaderValue("application/json") } }));
        requests.Add(() => owner.PostAsync($"/api/v1/projects/{p}/items", new ByteArrayContent([0xff, 0xfe, 0x00, 0x7b]) { Headers = { ContentType = new MediaTypeHeaderValue("application/x-ndjson") } }));
        requests.Add(() => owner.PutAsync($"/api/v1/projects/{p}", Api.RawJson("{}")));
        requests.Add(() => owner.DeleteAsync($"/api/v1/projects/{p}"));
        requests.Add(() => s.Annotator.PostAsync($"/api/v1/sessions/{sid}/next", null));

        Assert.True(requests.Count >= 200, $"only {requests.Count} requests");
        var failures = new List<string>();
        var i = 0;
        foreach (var send in requests)
        {
            var response = await send();
            var status = (int)response.StatusCode;
            var text = await response.Content.ReadAsStringAsync();
            if (status is < 400 or >= 500 || response.Content.Headers.ContentType?.MediaType != "application/problem+json")
                failures.Add($"#{i}: {response.RequestMessage?.Method} {response.RequestMessage?.RequestUri?.PathAndQuery[..Math.Min(120, response.RequestMessage!.RequestUri!.PathAndQuery.Length)]} → {status} {text[..Math.Min(200, text.Length)]}");
            Assert.DoesNotContain("   at ", text, StringComparison.Ordinal);
            i++;
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));

        // The session is unharmed by all of it.
        await Api.JsonAsync(await s.Annotator.GetAsync($"/api/v1/sessions/{sid}/next"), 200);
    }
}
