using System.Text.Json.Nodes;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;
using TeachServe.Server.Auth;

namespace TeachServe.Server.Contract;

/// <summary>Document-wide parts: title, a relative server, the key scheme, the problem details schema, and a description per tag.</summary>
public sealed class ContractDocument : IOpenApiDocumentTransformer
{
    /// <summary>Every tag an endpoint group uses; a tag missing here shows up as a lint warning.</summary>
    public static readonly IReadOnlyDictionary<string, string> Tags = new Dictionary<string, string>
    {
        ["Health"] = "Liveness and readiness probes for load balancers and orchestrators; no key.",
        ["Projects"] = "Labelling tasks: settings (project.json), keys, item counts.",
        ["Items"] = "The items annotators are taught and tested on, uploaded in bulk and upserted by id.",
        ["Versions"] = "Immutable compiled model versions; sessions pin the version they started on.",
        ["Sessions"] = "One annotator's onboarding run: start, next item, answers, status, test exposure.",
        ["Releases"] = "The feed of annotators who passed the gate, with their evidence.",
        ["Events"] = "The append-only event log of a project, exported as JSON Lines.",
        ["Live quality"] = "After release: live-check outcomes reported by the platform, and each annotator's drift status.",
        ["Privacy"] = "Erasing one worker's data, and the audit entries that record it.",
        ["Experiments"] = "A/B tests of teaching configurations: arms, start and stop, reports and plots.",
        ["Fits"] = "Learner-model parameters estimated from finished sessions, and calibration of predicted error.",
        ["Simulations"] = "Offline comparisons of policies with simulated learners, run in the background.",
        ["Annotator page"] = "The calls the annotator page makes: launch-link exchange, page state, test images.",
    };

    public Task TransformAsync(OpenApiDocument document, OpenApiDocumentTransformerContext context, CancellationToken cancellationToken)
    {
        document.Info = new OpenApiInfo
        {
            Title = "TeachServe API",
            Version = "v1",
            Description = "Onboards annotators for labelling platforms: teaches a labelling task item by item and releases " +
                "annotators when the evidence says they label well enough. Errors are RFC 9457 problem details.",
        };
        // Relative to where the document was fetched from. The request's own host is not written in: the document is
        // built once and cached, so the first caller's Host header would otherwise be served to everyone.
        document.Servers = [new OpenApiServer { Url = "/" }];

        document.Components ??= new OpenApiComponents();
        document.Components.SecuritySchemes ??= new Dictionary<string, IOpenApiSecurityScheme>();
        document.Components.SecuritySchemes[ApiContract.BearerScheme] = new OpenApiSecurityScheme
        {
            Type = SecuritySchemeType.Http,
            Scheme = "bearer",
            Description = $"One of the four kinds of key: the server's admin key ({ApiKeys.AdminPrefix}.…), a project's owner key " +
                $"({ApiKeys.OwnerPrefix}.…) or embed key ({ApiKeys.EmbedPrefix}.…), or a session token ({ApiKeys.SessionPrefix}.…). " +
                "Each operation says which kinds it accepts; keys are shown once, when created.",
        };
        document.Components.Schemas ??= new Dictionary<string, IOpenApiSchema>();
        document.Components.Schemas[ApiContract.ProblemSchema] = ProblemDetailsSchema();

        var used = document.Paths.Values.SelectMany(p => p.Operations?.Values.AsEnumerable() ?? [])
            .SelectMany(o => o.Tags ?? new HashSet<OpenApiTagReference>()).Select(t => t.Name).ToHashSet(StringComparer.Ordinal);
        document.Tags = new HashSet<OpenApiTag>(used.Order(StringComparer.Ordinal).Select(name => new OpenApiTag
        {
            Name = name,
            Description = Tags.GetValueOrDefault(name!),
        }));
        return Task.CompletedTask;
    }

    /// <summary>RFC 9457 members, and the extension members TeachServe adds (always traceId; the rest where the detail says).</summary>
    private static OpenApiSchema ProblemDetailsSchema() => new()
    {
        Type = JsonSchemaType.Object,
        Description = "An error (RFC 9457 problem details). Every 4xx and 5xx answer of the API has this shape.",
        Required = new HashSet<string> { "status", "title" },
        Properties = new Dictionary<string, IOpenApiSchema>
        {
            ["type"] = Text("A URI reference naming the kind of problem.", "uri-reference"),
            ["title"] = Text("A short summary of the kind of problem."),
            ["status"] = new OpenApiSchema { Type = JsonSchemaType.Integer, Format = "int32", Minimum = "400", Maximum = "599", Description = "The HTTP status code." },
            ["detail"] = Text("What went wrong with this request, for a person to read."),
            ["instance"] = Text("A URI reference naming this occurrence.", "uri-reference"),
            ["traceId"] = Text("Identifies the request in the server log."),
            ["errors"] = new OpenApiSchema
            {
                Type = JsonSchemaType.Array,
                Description = "Validation problems, one per field or line, when the request was read but not valid (422).",
                Items = new OpenApiSchema(),
            },
        },
        AdditionalPropertiesAllowed = true,
        Examples =
        [
            new JsonObject
        {
                ["type"] = "https://tools.ietf.org/html/rfc9110#section-15.5.5",
                ["title"] = "Not found",
                ["status"] = 404,
                ["detail"] = "No such project.",
                ["traceId"] = "00-4bf92f3577b34da6a3ce929d0e0e4736-00f067aa0ba902b7-00",
            },
        ],
    };

    private static OpenApiSchema Text(string description, string? format = null) =>
        new() { Type = JsonSchemaType.String, Format = format, Description = description };
}
