using System.Text;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Core.Projects;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Items;

public sealed record ItemUploadResult(int Received, int Created, int Updated, int Unchanged, ItemCounts Total);

public static class ItemsApi
{
    public static RouteGroupBuilder MapItems(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/items").WithTags("Items");
        group.MapPost("/", UploadItems).RequireKey(KeyRole.Owner).WithName("uploadItems")
            // The media types listed here are also the ones routing lets through (any other is 415 before the handler).
            .Accepts<ItemDefinition[]>(ItemUploadFormats.JsonLinesMediaType, "application/json", ItemUploadFormats.CsvMediaType)
            .AddOpenApiOperationTransformer(ItemUploadBodies.DescribeAsync)
            .Problem(StatusCodes.Status422UnprocessableEntity, "Some items are not valid (errors names each line and field), or the project would hold too many; nothing was stored.")
            .WithSummary("Upsert items by id from JSON Lines, a JSON array or CSV; all or nothing.");
        return group;
    }

    public static async Task<Results<Ok<ItemUploadResult>, ProblemHttpResult>> UploadItems(
        string projectId, HttpRequest request, ItemOperations items, CancellationToken ct)
    {
        if (ItemUploadFormats.FromContentType(request.ContentType) is not { } format)
            return Problems.Of(StatusCodes.Status415UnsupportedMediaType, Problems.Titles.UnsupportedMediaType,
                "Send items as application/x-ndjson (JSON Lines), application/json (an array) or text/csv.");
        var body = await ReadBodyAsync(request, items.Limits.MaxUploadBytes, ct);
        if (!body.Succeeded) return body.Problem;
        return (await items.UploadAsync(projectId, format, body.Value, ct)).Answer(TypedResults.Ok);
    }

    /// <summary>Reads at most <paramref name="limit"/> bytes of UTF-8; more is 413, invalid UTF-8 is 400.</summary>
    private static async Task<Outcome<string>> ReadBodyAsync(HttpRequest request, long limit, CancellationToken ct)
    {
        if (request.ContentLength > limit) return TooLarge(limit);
        if (request.HttpContext.Features.Get<IHttpMaxRequestBodySizeFeature>() is { IsReadOnly: false } size)
            size.MaxRequestBodySize = limit + 1;

        using var buffer = new MemoryStream();
        var chunk = new byte[81920];
        int read;
        while ((read = await request.Body.ReadAsync(chunk, ct)) > 0)
        {
            if (buffer.Length + read > limit) return TooLarge(limit);
            buffer.Write(chunk, 0, read);
        }
        try
        {
            return new UTF8Encoding(false, throwOnInvalidBytes: true).GetString(buffer.GetBuffer(), 0, (int)buffer.Length);
        }
        catch (DecoderFallbackException)
        {
            return Problems.BadRequest("The body is not valid UTF-8.");
        }
    }

    private static ProblemHttpResult TooLarge(long limit) =>
        Problems.Of(StatusCodes.Status413PayloadTooLarge, Problems.Titles.TooLarge,
            $"Uploads are limited to {limit} bytes; split the items into several uploads.",
            new Dictionary<string, object?> { ["limit"] = limit });
}
