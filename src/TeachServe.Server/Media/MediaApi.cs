using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;
using TeachServe.Server.Sessions;
using TeachServe.Server.Contract;

namespace TeachServe.Server.Media;

/// <summary>The route of test items' images; <see cref="MediaOperations"/> serves them.</summary>
public static class MediaApi
{
    public static RouteGroupBuilder MapMedia(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/sessions/{sessionId}/media").WithTags("Annotator page");
        group.MapGet("/{token}", GetImage).WithName("getTestImage")
            .AddOpenApiOperationTransformer(DescribeImageAsync)
            .Problem(StatusCodes.Status403Forbidden, "The image is on an address the server does not fetch from (loopback or a private network).")
            .Problem(StatusCodes.Status404NotFound, "No such image: a wrong or old address, or a session that ended or is idle.")
            .Problem(StatusCodes.Status502BadGateway, "The image could not be fetched as an image within the size limit.")
            .Problem(StatusCodes.Status504GatewayTimeout, "The image host did not answer in time.")
            .WithSummary("The image of the session's current test item, fetched by the server; the address is given by /next and works for that step only.");
        return group;
    }

    /// <summary>The image's type is the image host's (any but SVG), so the document names the range, which endpoint metadata cannot.</summary>
    private static Task DescribeImageAsync(OpenApiOperation operation, OpenApiOperationTransformerContext context, CancellationToken ct)
    {
        operation.Responses ??= [];
        operation.Responses["200"] = new OpenApiResponse
        {
            Description = "The image, in the type its host sent (any image type but SVG); not cached.",
            Content = new Dictionary<string, OpenApiMediaType>
            {
                ["image/*"] = new() { Schema = new OpenApiSchema { Type = JsonSchemaType.String, Format = "binary" } },
            },
        };
        return Task.CompletedTask;
    }

    public static async Task<Results<FileContentHttpResult, ProblemHttpResult>> GetImage(
        string sessionId, string token, HttpResponse response, MediaOperations media, CancellationToken ct) =>
        (await media.ImageAsync(sessionId, token, ct)).Answer(image =>
        {
            response.Headers.CacheControl = "no-store";
            return TypedResults.File(image.Bytes, image.MediaType);
        });

    /// <summary>Kept for the session endpoints, which call it by this name; see <see cref="MediaOperations.ForAnnotator"/>.</summary>
    public static Core.Projects.ItemContent ForAnnotator(Versions.CompiledVersion version, Session session, int item, string baseUrl) =>
        MediaOperations.ForAnnotator(version, session, item, baseUrl);
}
