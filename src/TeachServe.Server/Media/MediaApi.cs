using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.AspNetCore.OpenApi;
using Microsoft.Extensions.Options;
using Microsoft.OpenApi;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Sessions.Store;
using TeachServe.Server.Contract;

namespace TeachServe.Server.Media;

/// <summary>
/// Test items' images under opaque per-session addresses. The address is the capability: it carries no key (an
/// <c>&lt;img&gt;</c> cannot send one), so it works only while its session is active and not idle past the token's
/// timeout, and only for the test item of the session's current step; anything else is 404 alike.
/// </summary>
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
        string sessionId, string token, HttpResponse response, TeachServeDb db, SessionLoader loader, SessionStateCache states,
        SessionReads reads, MediaFetcher fetcher, TimeProvider time, IOptions<TeachServeOptions> options,
        CancellationToken ct)
    {
        if (token.Length != MediaTokens.Length || sessionId.Length > 40) return Problems.NotFound("No such image.");
        string url;
        using (await states.LockAsync(sessionId, ct))
        {
            var session = await reads.SessionAsync(db, sessionId, ct);
            if (session is null || !session.IsActive || time.GetUtcNow() - session.LastSeenAt > options.Value.SessionIdleTimeout)
                return Problems.NotFound("No such image.");
            var (version, run) = await loader.LoadAsync(db, session, ct);
            var item = run.CurrentItem;
            if (item < version.Model.TeachCount || version.Content[item].ImageUrl is not { } imageUrl
                || !MediaTokens.Matches(session.RefKey, session.Step, item, token))
                return Problems.NotFound("No such image.");
            url = imageUrl;
        }

        // The fetch runs outside the session's lock: a slow image host must not hold up the session's answers.
        try
        {
            var image = await fetcher.FetchAsync(url, ct);
            response.Headers.CacheControl = "no-store";
            return TypedResults.File(image.Bytes, image.MediaType);
        }
        catch (MediaFetchException e)
        {
            // The detail never names the owner's address: it may name the item or its label.
            return e.Failure switch
            {
                MediaFailure.Refused => TypedResults.Problem(
                    "The item's image is on an address this server does not fetch from (a loopback or private network).",
                    statusCode: StatusCodes.Status403Forbidden, title: "Image address refused"),
                MediaFailure.TimedOut => TypedResults.Problem("The item's image host did not answer in time.",
                    statusCode: StatusCodes.Status504GatewayTimeout, title: "Image host timed out"),
                _ => TypedResults.Problem("The item's image could not be fetched as an image within the size limit.",
                    statusCode: StatusCodes.Status502BadGateway, title: "Image unavailable"),
            };
        }
    }

    /// <summary>
    /// The content the annotator gets for an item: a test item's image address replaced by its opaque per-session
    /// address (absolute, on <paramref name="baseUrl"/>); teaching items, text and SVG unchanged.
    /// </summary>
    public static Core.Projects.ItemContent ForAnnotator(Versions.CompiledVersion version, Session session, int item, string baseUrl)
    {
        var content = version.Content[item];
        if (item < version.Model.TeachCount || content.ImageUrl is null) return content;
        return content with { ImageUrl = baseUrl + MediaTokens.Path(session.Id, MediaTokens.For(session.RefKey, session.Step, item)) };
    }
}
