using System.Net.Http.Json;

namespace TeachServe.Server.Tests;

/// <summary>The experiment, simulation and fit endpoints under malformed, out-of-range and foreign requests: 4xx problems, never 5xx.</summary>
public sealed class ResearchBadInputTests
{
    [Fact]
    public async Task Bad_research_requests_get_4xx_problem_details_and_never_5xx()
    {
        using var app = new TestApp(new() { ["TeachServe:RateLimit:PermitLimit"] = "100000" });
        var keys = await app.ReadyProjectAsync();
        var other = await app.ReadyProjectAsync();
        var owner = app.Client(keys.OwnerKey);
        var embed = app.Client(keys.EmbedKey);
        var stranger = app.Client(other.OwnerKey);
        var p = keys.ProjectId;
        var exp = (await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{p}/experiments", new
        {
            name = "e", arms = new object[] { new { name = "a", policy = "random" }, new { name = "b", policy = "adaptive" } },
        }), 201))["experimentId"]!.GetValue<string>();
        var sim = (await Api.JsonAsync(await owner.PostAsJsonAsync($"/api/v1/projects/{p}/simulations", new
        {
            policies = new[] { "random" }, learners = 5,
        }), 202))["simulationId"]!.GetValue<string>();
        var huge = new string('x', 300_000);

        var experimentBodies = new[]
        {
            "", "{", "null", "[]", "42", "{}", "{\"name\":\"x\"}", "{\"name\":\"x\",\"arms\":null}", "{\"name\":\"x\",\"arms\":[]}",
            "{\"name\":\"x\",\"arms\":[null,null]}", "{\"name\":\"x\",\"arms\":[{\"name\":\"a\"}]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"}]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"warp\"}]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}],\"weights\":[1,-1]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}],\"weights\":[1]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}],\"weights\":\"1,1\"}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}],\"primaryMetric\":\"vibes\"}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}],\"minimumDetectableEffect\":0}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}],\"minimumDetectableEffect\":\"big\"}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}],\"controlArm\":\"z\"}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\",\"learnerAlpha\":0}]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\",\"gate\":{\"targetError\":2}}]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\",\"gate\":{\"test\":{\"delta\":0.95}}}]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\",\"gate\":{\"maxTeachingItems\":0}}]}",
            "{\"name\":\"x\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\",\"extra\":1}]}",
            "{\"name\":\"x\",\"salt\":\"mine\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"b\",\"policy\":\"cover\"}]}",
            $"{{\"name\":\"{huge}\",\"arms\":[{{\"name\":\"a\",\"policy\":\"random\"}},{{\"name\":\"b\",\"policy\":\"cover\"}}]}}",
            "{\"name\":\"\",\"arms\":[{\"name\":\"a\",\"policy\":\"random\"},{\"name\":\"a\",\"policy\":\"cover\"}]}",
        };
        var simulationBodies = new[]
        {
            "", "{", "null", "{}", "{\"policies\":[]}", "{\"policies\":null}", "{\"policies\":\"random\"}", "{\"policies\":[\"x\"]}",
            "{\"policies\":[\"random\",\"random\"]}", "{\"policies\":[\"random\"],\"learners\":-1}", "{\"policies\":[\"random\"],\"learners\":1e9}",
            "{\"policies\":[\"random\"],\"learners\":\"ten\"}", "{\"policies\":[\"random\"],\"variants\":[]}", "{\"policies\":[\"random\"],\"variants\":[\"odd\"]}",
            "{\"policies\":[\"random\"],\"seed\":-1}", "{\"policies\":[\"random\"],\"modelVersion\":0}", "{\"policies\":[\"random\"],\"modelVersion\":77}",
            "{\"policies\":[\"random\"],\"extra\":true}",
        };
        var fitBodies = new[]
        {
            "", "{", "null", "[]", "{\"modelVersion\":0}", "{\"modelVersion\":99}", "{\"modelVersion\":\"1\"}", "{\"confidence\":1}",
            "{\"confidence\":0.1}", "{\"calibrationBins\":1}", "{\"calibrationBins\":500}", "{\"other\":1}", "{}",
        };

        var requests = new List<Func<Task<HttpResponseMessage>>>();
        foreach (var body in experimentBodies) requests.Add(() => owner.PostAsync($"/api/v1/projects/{p}/experiments", Api.RawJson(body)));
        foreach (var body in simulationBodies) requests.Add(() => owner.PostAsync($"/api/v1/projects/{p}/simulations", Api.RawJson(body)));
        foreach (var body in fitBodies) requests.Add(() => owner.PostAsync($"/api/v1/projects/{p}/fits", Api.RawJson(body)));
        requests.Add(() => stranger.PostAsync($"/api/v1/projects/{p}/experiments", Api.RawJson("{}")));
        requests.Add(() => embed.PostAsync($"/api/v1/projects/{p}/simulations", Api.RawJson("{\"policies\":[\"random\"]}")));

        var ids = new[] { "x", "exp_", "exp_!!", "exp_0000000000000000", "sim_0000000000000000", "fit_0000000000000000", "%2e%2e", new string('a', 3000) };
        foreach (var id in ids)
        {
            requests.Add(() => owner.GetAsync($"/api/v1/experiments/{id}"));
            requests.Add(() => owner.GetAsync($"/api/v1/experiments/{id}/report"));
            requests.Add(() => owner.PostAsync($"/api/v1/experiments/{id}/start", null));
            requests.Add(() => owner.GetAsync($"/api/v1/simulations/{id}"));
            requests.Add(() => owner.DeleteAsync($"/api/v1/simulations/{id}"));
            requests.Add(() => owner.GetAsync($"/api/v1/fits/{id}"));
            requests.Add(() => owner.PostAsync($"/api/v1/fits/{id}/apply", null));
        }
        foreach (var client in new[] { stranger, embed, app.Client() })
        {
            requests.Add(() => client.GetAsync($"/api/v1/experiments/{exp}/report"));
            requests.Add(() => client.GetAsync($"/api/v1/experiments/{exp}/report.csv"));
            requests.Add(() => client.PostAsync($"/api/v1/experiments/{exp}/start", null));
            requests.Add(() => client.GetAsync($"/api/v1/simulations/{sim}"));
            requests.Add(() => client.PostAsync($"/api/v1/simulations/{sim}/cancel", null));
        }
        foreach (var plot in new[] { "x.svg", "learning-curves.gif", "learning-curves", "..%2fsecret.png", "test-error.svg.png" })
            requests.Add(() => owner.GetAsync($"/api/v1/experiments/{exp}/plots/{plot}"));
        requests.Add(() => owner.PostAsync($"/api/v1/experiments/{exp}/stop", null));
        requests.Add(() => owner.GetAsync($"/api/v1/simulations/{sim}/plots/calibration.svg"));
        requests.Add(() => owner.PutAsync($"/api/v1/experiments/{exp}", Api.RawJson("{}")));

        Assert.True(requests.Count >= 50, $"only {requests.Count} requests");
        var failures = new List<string>();
        foreach (var send in requests)
        {
            var response = await send();
            var status = (int)response.StatusCode;
            var text = await response.Content.ReadAsStringAsync();
            if (status is < 400 or >= 500 || response.Content.Headers.ContentType?.MediaType != "application/problem+json")
                failures.Add($"{response.RequestMessage?.Method} {response.RequestMessage?.RequestUri?.PathAndQuery[..Math.Min(100, response.RequestMessage!.RequestUri!.PathAndQuery.Length)]} → {status} {text[..Math.Min(200, text.Length)]}");
            Assert.DoesNotContain("   at ", text, StringComparison.Ordinal);
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
    }
}
