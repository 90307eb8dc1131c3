using System.Text.Json.Nodes;

namespace TeachServe.Server.Tests;

/// <summary>The served OpenAPI document: written out for the linter that ./test.sh runs, and checked for what the contract promises.</summary>
public sealed class OpenApiContractTests
{
    /// <summary>Where the export test writes the document: $TEACHSERVE_OPENAPI_OUT, else artifacts/openapi/v1.json.</summary>
    private static string ExportPath()
    {
        if (Environment.GetEnvironmentVariable("TEACHSERVE_OPENAPI_OUT") is { Length: > 0 } path) return Path.GetFullPath(path);
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
        {
            if (File.Exists(Path.Combine(dir.FullName, "TeachServe.sln")))
                return Path.Combine(dir.FullName, "artifacts", "openapi", "v1.json");
        }
        return Path.Combine(AppContext.BaseDirectory, "openapi", "v1.json");
    }

    [Fact]
    public async Task The_served_document_is_written_out_for_the_linter()
    {
        using var app = new TestApp();
        var text = await app.Client().GetStringAsync("/openapi/v1.json");
        Assert.Equal("3.1", JsonNode.Parse(text)!["openapi"]!.GetValue<string>()[..3]);

        var path = ExportPath();
        Directory.CreateDirectory(Path.GetDirectoryName(path)!);
        await File.WriteAllTextAsync(path, text);
        Assert.Equal(text, await File.ReadAllTextAsync(path));
    }

    private static async Task<JsonObject> DocumentAsync()
    {
        using var app = new TestApp();
        return JsonNode.Parse(await app.Client().GetStringAsync("/openapi/v1.json"))!.AsObject();
    }

    private static IEnumerable<(string Path, string Method, JsonObject Operation)> Operations(JsonObject document) =>
        document["paths"]!.AsObject().SelectMany(path => path.Value!.AsObject()
            .Select(op => (path.Key, op.Key, op.Value!.AsObject())));

    [Fact]
    public async Task Keyed_operations_name_the_bearer_scheme_and_anonymous_ones_none()
    {
        var document = await DocumentAsync();
        var scheme = document["components"]!["securitySchemes"]!["bearer"]!;
        Assert.Equal("http", scheme["type"]!.GetValue<string>());
        Assert.Equal("bearer", scheme["scheme"]!.GetValue<string>());

        var anonymous = new HashSet<string> { "/healthz", "/readyz", "/api/v1/launch", "/api/v1/sessions/{sessionId}/media/{token}" };
        foreach (var (path, method, operation) in Operations(document))
        {
            var requirements = operation["security"]?.AsArray() ?? [];
            if (anonymous.Contains(path))
            {
                Assert.True(requirements.Count == 0, $"{method} {path} needs no key but names one");
                Assert.Null(operation["responses"]!["401"]);
            }
            else
            {
                Assert.True(requirements.Count == 1 && requirements[0]!["bearer"] is not null, $"{method} {path} does not name the bearer scheme");
                Assert.NotNull(operation["responses"]!["401"]);
            }
        }
    }

    [Fact]
    public async Task Every_operation_has_a_unique_camel_case_operation_id()
    {
        var ids = Operations(await DocumentAsync())
            .Select(o => o.Operation["operationId"]?.GetValue<string>() ?? $"(none on {o.Method} {o.Path})").ToList();
        Assert.All(ids, id => Assert.Matches("^[a-z][A-Za-z]+$", id));
        Assert.Equal(ids.Count, ids.Distinct(StringComparer.Ordinal).Count());
    }

    [Fact]
    public async Task Every_operation_that_takes_input_documents_its_problems_as_problem_details()
    {
        var document = await DocumentAsync();
        var problem = document["components"]!["schemas"]!["ProblemDetails"]!;
        Assert.Equal(["status", "title"], problem["required"]!.AsArray().Select(n => n!.GetValue<string>()).Order());
        Assert.NotNull(problem["properties"]!["traceId"]);

        foreach (var (path, method, operation) in Operations(document))
        {
            var takesInput = operation["requestBody"] is not null || (operation["parameters"]?.AsArray().Count ?? 0) > 0;
            var responses = operation["responses"]!.AsObject();
            var problems = responses.Where(r => r.Key[0] is '4' or '5').ToList();
            if (takesInput) Assert.True(problems.Any(r => r.Key[0] == '4'), $"{method} {path} takes input but documents no 4xx");
            foreach (var (status, response) in problems)
            {
                var content = response!["content"]?.AsObject();
                Assert.True(content is { Count: 1 } && content["application/problem+json"]?["schema"]?["$ref"]?.GetValue<string>() == "#/components/schemas/ProblemDetails",
                    $"{method} {path} {status} is not problem details");
            }
            Assert.True(responses.Any(r => r.Key == "204" || (r.Key[0] == '2' && r.Value!["content"] is { } c && c.AsObject().All(m => m.Value!["schema"] is not null))),
                $"{method} {path} has no success response with a schema (nor a 204 without a body)");
        }
    }

    [Fact]
    public async Task Session_phases_and_statuses_are_string_enums_with_the_values_the_server_writes()
    {
        var schemas = (await DocumentAsync())["components"]!["schemas"]!;
        string[] Values(string schema, string property) =>
            schemas[schema]!["properties"]![property]!["enum"]!.AsArray().Select(n => n!.GetValue<string>()).ToArray();

        foreach (var schema in new[] { "SessionView", "SessionStarted", "NextItem", "AnswerResult", "EvidenceView", "AnnotatorPageState" })
            Assert.Equal(["teaching", "testing", "released", "failed"], Values(schema, "phase"));
        Assert.Equal(["compiling", "ready", "failed"], Values("VersionView", "status"));
        Assert.Equal(["draft", "running", "stopped"], Values("ExperimentView", "status"));
        Assert.Equal(["queued", "running", "succeeded", "failed", "canceled"], Values("SimulationView", "status"));

        // Research results spell enum members as the report serializer does, not as the integers of the default options.
        var variant = schemas["LearnerVariant"]!;
        Assert.Equal("string", variant["type"]!.GetValue<string>());
        var written = System.Text.Json.JsonSerializer.Serialize(Core.Simulation.LearnerVariant.BiasedPrior, Infrastructure.Json.Results);
        Assert.Contains(written.Trim('"'), variant["enum"]!.AsArray().Select(n => n!.GetValue<string>()));
        Assert.Equal(Enum.GetValues<Core.Simulation.LearnerVariant>().Length, variant["enum"]!.AsArray().Count);
    }

    [Fact]
    public async Task Request_bodies_and_non_json_responses_have_their_own_media_types_and_shapes()
    {
        var paths = (await DocumentAsync())["paths"]!;
        var upload = paths["/api/v1/projects/{projectId}/items"]!["post"]!["requestBody"]!["content"]!;
        Assert.Equal("array", upload["application/json"]!["schema"]!["type"]!.GetValue<string>());
        Assert.Equal("string", upload["text/csv"]!["schema"]!["type"]!.GetValue<string>());
        Assert.Equal("string", upload["application/x-ndjson"]!["schema"]!["type"]!.GetValue<string>());

        var create = paths["/api/v1/projects"]!["post"]!["requestBody"]!["content"]!["application/json"]!["schema"]!;
        Assert.NotNull(create["properties"]!["labels"]);
        Assert.NotNull(create["properties"]!["releaseWebhook"]);
        Assert.NotNull(paths["/api/v1/projects/{projectId}"]!["patch"]!["requestBody"]!["content"]!["application/merge-patch+json"]);

        JsonObject Ok(string path) => paths[path]!["get"]!["responses"]!["200"]!["content"]!.AsObject();
        Assert.Equal(["image/svg+xml", "image/png"], Ok("/api/v1/experiments/{experimentId}/plots/{file}").Select(c => c.Key));
        Assert.Equal(["text/csv"], Ok("/api/v1/simulations/{simulationId}/results.csv").Select(c => c.Key));
        Assert.Equal(["application/x-ndjson"], Ok("/api/v1/projects/{projectId}/events").Select(c => c.Key));
    }

    [Fact]
    public async Task Documented_problems_are_what_the_server_answers()
    {
        using var app = new TestApp();
        var client = app.Client();
        var document = JsonNode.Parse(await client.GetStringAsync("/openapi/v1.json"))!;
        var getProject = document["paths"]!["/api/v1/projects/{projectId}"]!["get"]!["responses"]!.AsObject();

        var anonymous = await client.GetAsync("/api/v1/projects/prj_nothing");
        Assert.Contains("401", getProject.Select(r => r.Key));
        Assert.Equal(401, (int)anonymous.StatusCode);
        Assert.Equal("application/problem+json", anonymous.Content.Headers.ContentType?.MediaType);

        // A handler's own problems say what they mean there, not only the status's name.
        var answerConflict = document["paths"]!["/api/v1/sessions/{sessionId}/answers"]!["post"]!["responses"]!["409"]!;
        Assert.Contains("currentStep", answerConflict["description"]!.GetValue<string>(), StringComparison.Ordinal);

        var listSessions = document["paths"]!["/api/v1/projects/{projectId}/sessions"]!["get"]!;
        var admin = app.Client(TestApp.AdminKey);
        var badPhase = await admin.GetAsync("/api/v1/projects/prj_nothing/sessions?phase=sleeping");
        Assert.Equal(400, (int)badPhase.StatusCode);
        Assert.NotNull(listSessions["responses"]!["400"]);
        Assert.DoesNotContain("sleeping", listSessions["parameters"]!.AsArray().Single(p => p!["name"]!.GetValue<string>() == "phase")!["schema"]!["enum"]!.AsArray().Select(n => n!.GetValue<string>()));
    }
}
