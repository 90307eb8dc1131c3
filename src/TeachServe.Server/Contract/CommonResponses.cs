using Microsoft.AspNetCore.Http.Metadata;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.AspNetCore.RateLimiting;
using Microsoft.OpenApi;
using TeachServe.Server.Auth;

namespace TeachServe.Server.Contract;

/// <summary>
/// The answers an operation can give before or around its handler, read from the endpoint's metadata rather than
/// repeated on forty endpoints: the key check (401, 403, 404 for a key of another project or session), the rate
/// limiter (429), body binding (400, 413, 415), query binding (400), and failures (500, 503). Also the key scheme
/// per operation (none on anonymous ones), and a schema for bodies that are not JSON (CSV, JSON Lines, images).
/// What a handler itself answers is declared on its endpoint with <see cref="ProblemMetadata.Problem{TBuilder}"/>.
/// </summary>
public sealed class CommonResponses : IOpenApiOperationTransformer
{
    private const string Malformed = "The request could not be read, or a parameter is malformed; the detail says which.";

    public Task TransformAsync(OpenApiOperation operation, OpenApiOperationTransformerContext context, CancellationToken cancellationToken)
    {
        var description = context.Description;
        var metadata = description.ActionDescriptor.EndpointMetadata;
        var route = description.RelativePath ?? "";
        var document = context.Document!;
        operation.Responses ??= [];
        // What an endpoint says its answers mean (ProblemMetadata.Problem); the API explorer passes on only the status.
        foreach (var declared in metadata.OfType<IProducesResponseTypeMetadata>().Where(m => m.Description is not null))
            if (operation.Responses.GetValueOrDefault(declared.StatusCode.ToString(System.Globalization.CultureInfo.InvariantCulture)) is OpenApiResponse response)
                response.Description = declared.Description;

        // An empty requirement list says "no key" explicitly; the document has no default requirement to inherit.
        operation.Security = [];
        if (metadata.OfType<KeyAccess.KeyRequirement>().LastOrDefault() is { } keys)
        {
            operation.Security = [new OpenApiSecurityRequirement { [new OpenApiSecuritySchemeReference(ApiContract.BearerScheme, document)] = [] }];
            var accepted = Accepted(keys.Roles);
            operation.Description = Join(operation.Description, $"Keys: {string.Join(", ", accepted.Select(Name))}.");
            Add(operation, document, StatusCodes.Status401Unauthorized, "No key, or not a valid one (WWW-Authenticate: Bearer).");
            if (accepted.Count < Enum.GetValues<KeyRole>().Length)
                Add(operation, document, StatusCodes.Status403Forbidden, "The key is valid but of a kind this operation does not accept.");
            if (route.Contains("{projectId}", StringComparison.Ordinal)
                || (route.Contains("{sessionId}", StringComparison.Ordinal) && accepted.Contains(KeyRole.Session)))
                Add(operation, document, StatusCodes.Status404NotFound, "No such resource, or one the key does not belong to.");
        }

        if (operation.RequestBody is not null)
        {
            Add(operation, document, StatusCodes.Status400BadRequest, Malformed);
            Add(operation, document, StatusCodes.Status413PayloadTooLarge, "The body is larger than the server accepts.");
            Add(operation, document, StatusCodes.Status415UnsupportedMediaType, "The body is not of a media type this operation reads.");
        }
        if (operation.Parameters?.Any(p => p.In == ParameterLocation.Query && p.Schema?.Type is { } type && !type.HasFlag(JsonSchemaType.String)) == true)
            Add(operation, document, StatusCodes.Status400BadRequest, Malformed);

        // Only the liveness probe skips the rate limiter, because it does no work: nothing there can fail or wait.
        if (!metadata.OfType<DisableRateLimitingAttribute>().Any())
        {
            Add(operation, document, StatusCodes.Status429TooManyRequests, "This key (or, without one, this client address) has used its requests for now.", retryAfter: true);
            Add(operation, document, StatusCodes.Status500InternalServerError, "An unexpected failure; the traceId finds it in the server log.");
            Add(operation, document, StatusCodes.Status503ServiceUnavailable, "The database cannot be reached right now; nothing was changed.", retryAfter: true);
        }

        DescribeTextAndBinaryBodies(operation, metadata);
        return Task.CompletedTask;
    }

    /// <summary>
    /// A response declared with a media type but no .NET type (CSV, JSON Lines, images) loses its media types on the
    /// way through the API explorer; they are read back from the endpoint's metadata, as text, or binary for images.
    /// </summary>
    private static void DescribeTextAndBinaryBodies(OpenApiOperation operation, IList<object> metadata)
    {
        foreach (var declared in metadata.OfType<IProducesResponseTypeMetadata>().Where(m => m.Type is null || m.Type == typeof(void)))
        {
            var code = declared.StatusCode.ToString(System.Globalization.CultureInfo.InvariantCulture);
            if (operation.Responses?.GetValueOrDefault(code) is not OpenApiResponse response || response.Content is { Count: > 0 }) continue;
            response.Content = declared.ContentTypes.ToDictionary(mediaType => mediaType, mediaType => new OpenApiMediaType
            {
                Schema = mediaType.StartsWith("image/", StringComparison.Ordinal)
                    ? new OpenApiSchema { Type = JsonSchemaType.String, Format = "binary" }
                    : new OpenApiSchema { Type = JsonSchemaType.String },
            });
        }
    }

    /// <summary>The roles a requirement lets in: the admin key may do what an owner key may (<see cref="KeyAccess"/>).</summary>
    private static List<KeyRole> Accepted(KeyRole[] roles) =>
        Enum.GetValues<KeyRole>().Where(r => roles.Contains(r) || (r == KeyRole.Admin && roles.Contains(KeyRole.Owner))).ToList();

    private static string Name(KeyRole role) => role == KeyRole.Session ? "session token" : role.ToString().ToLowerInvariant() + " key";

    private static string Join(string? first, string second) => string.IsNullOrEmpty(first) ? second : first + "\n\n" + second;

    /// <summary>A problem details response for <paramref name="status"/>, unless the endpoint already declares one.</summary>
    private static void Add(OpenApiOperation operation, OpenApiDocument document, int status, string description, bool retryAfter = false)
    {
        var code = status.ToString(System.Globalization.CultureInfo.InvariantCulture);
        operation.Responses ??= [];
        if (operation.Responses.ContainsKey(code)) return;
        var response = new OpenApiResponse
        {
            Description = description,
            Content = new Dictionary<string, OpenApiMediaType>
            {
                [ApiContract.ProblemMediaType] = new() { Schema = new OpenApiSchemaReference(ApiContract.ProblemSchema, document) },
            },
        };
        if (retryAfter)
            response.Headers = new Dictionary<string, IOpenApiHeader>
            {
                ["Retry-After"] = new OpenApiHeader
                {
                    Description = "Seconds to wait before retrying.",
                    Schema = new OpenApiSchema { Type = JsonSchemaType.Integer, Format = "int32" },
                },
            };
        operation.Responses[code] = response;
    }
}
