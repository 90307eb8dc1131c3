using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;
using TeachServe.Core.Projects;

namespace TeachServe.Server.Projects;

/// <summary>
/// The project endpoints' request bodies in the OpenAPI document. The handlers read a raw JSON node (so that they
/// can apply a merge patch and name the failing field), which the framework can only describe as "any JSON".
/// </summary>
public static class ProjectBodies
{
    public const string MergePatchMediaType = "application/merge-patch+json";

    /// <summary><c>POST /projects</c>: a project.json document, plus the optional server-only <c>releaseWebhook</c>.</summary>
    public static async Task DescribeDocumentAsync(OpenApiOperation operation, OpenApiOperationTransformerContext context, CancellationToken ct)
    {
        // The settings' own schema with one more member, rather than allOf: it forbids unknown members (as the
        // server does), which under allOf would forbid releaseWebhook too.
        var settings = await context.GetOrCreateSchemaAsync(typeof(ProjectSettings), cancellationToken: ct) as OpenApiSchema
            ?? throw new InvalidOperationException("The project settings schema is expected inline.");
        var webhook = await context.GetOrCreateSchemaAsync(typeof(ReleaseWebhookSettings), cancellationToken: ct);
        var document = new OpenApiSchema
        {
            Type = JsonSchemaType.Object,
            Description = "A project.json document; releaseWebhook (optional) is where releases are posted, signed with its secret.",
            Required = settings.Required,
            Properties = new Dictionary<string, IOpenApiSchema>(settings.Properties ?? new Dictionary<string, IOpenApiSchema>())
            {
                [ProjectDocument.WebhookProperty] = webhook,
            },
            AdditionalPropertiesAllowed = settings.AdditionalPropertiesAllowed,
        };
        operation.RequestBody = new OpenApiRequestBody
        {
            Required = true,
            Content = new Dictionary<string, OpenApiMediaType> { ["application/json"] = new() { Schema = document } },
        };
    }

    /// <summary><c>PATCH /projects/{id}</c>: a JSON merge patch (RFC 7386) of that document.</summary>
    public static Task DescribeMergePatchAsync(OpenApiOperation operation, OpenApiOperationTransformerContext context, CancellationToken ct)
    {
        var patch = new OpenApiMediaType
        {
            Schema = new OpenApiSchema
            {
                Type = JsonSchemaType.Object,
                Description = "A JSON merge patch (RFC 7386) of the project document: the members to change; null removes an optional member.",
            },
        };
        operation.RequestBody = new OpenApiRequestBody
        {
            Required = true,
            Content = new Dictionary<string, OpenApiMediaType> { [MergePatchMediaType] = patch, ["application/json"] = patch },
        };
        return Task.CompletedTask;
    }
}
