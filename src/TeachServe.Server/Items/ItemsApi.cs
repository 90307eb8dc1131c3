using System.Text;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Projects;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
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
        string projectId, HttpRequest request, TeachServeDb db, TimeProvider time,
        IOptions<TeachServeOptions> options, TextEmbeddings embeddings, CancellationToken ct)
    {
        var limits = options.Value.Uploads;
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        var format = ItemUploadFormats.FromContentType(request.ContentType)
            ?? throw new ApiProblemException(StatusCodes.Status415UnsupportedMediaType, "Unsupported media type",
                "Send items as application/x-ndjson (JSON Lines), application/json (an array) or text/csv.");

        var body = await ReadBodyAsync(request, limits.MaxUploadBytes, ct);
        var settings = ProjectsApi.Settings(project);
        var parsed = ItemParsing.Read(format, body, settings, limits.MaxItemsPerUpload);
        if (parsed.Problems.Count > 0)
            return Problems.Unprocessable(
                $"{parsed.Problems.Count} problem(s) found; nothing was stored.",
                new Dictionary<string, object?> { ["errors"] = parsed.Problems });

        return await StoreAsync(db, projectId, settings, parsed.Items, limits, time, embeddings, ct);
    }

    /// <summary>Upserts validated items by id in one transaction (the API's upload and the console's file picker share it).</summary>
    public static async Task<Results<Ok<ItemUploadResult>, ProblemHttpResult>> StoreAsync(
        TeachServeDb db, string projectId, ProjectSettings settings, IReadOnlyList<ItemDefinition> items, UploadOptions limits, TimeProvider time,
        TextEmbeddings embeddings, CancellationToken ct)
    {
        var ids = items.Select(i => i.Id).ToList();
        var existing = await db.Items.Where(i => i.ProjectId == projectId && ids.Contains(i.ItemId))
            .ToDictionaryAsync(i => i.ItemId, StringComparer.Ordinal, ct);
        var stored = await db.Items.CountAsync(i => i.ProjectId == projectId, ct);
        var newCount = items.Count(i => !existing.ContainsKey(i.Id));
        if (stored + newCount > limits.MaxItemsPerProject)
            return Problems.Unprocessable(
                $"A project may hold at most {limits.MaxItemsPerProject} items; this upload would make {stored + newCount}.");

        var now = time.GetUtcNow();
        int created = 0, updated = 0, unchanged = 0;
        foreach (var definition in items)
        {
            var json = Json.Serialize(definition);
            if (!existing.TryGetValue(definition.Id, out var row))
            {
                db.Items.Add(new Item
                {
                    ProjectId = projectId, ItemId = definition.Id, Pool = definition.Pool,
                    Label = definition.Label, Json = json, UpdatedAt = now,
                });
                created++;
            }
            else if (row.Json == json)
            {
                unchanged++;
            }
            else
            {
                row.Pool = definition.Pool;
                row.Label = definition.Label;
                row.Json = json;
                row.UpdatedAt = now;
                updated++;
            }
        }
        if (settings.Family?.Kind == FamilyKinds.Text)
            await EmbedTextsAsync(db, projectId, embeddings, ct);
        // One SaveChanges is one transaction: the upload is stored whole or not at all.
        await db.SaveChangesAsync(ct);

        var counts = await db.Items.Where(i => i.ProjectId == projectId)
            .GroupBy(i => i.Pool).Select(g => new { Pool = g.Key, Count = g.Count() }).ToListAsync(ct);
        return TypedResults.Ok(new ItemUploadResult(items.Count, created, updated, unchanged, new ItemCounts(
            counts.FirstOrDefault(c => c.Pool == Pools.Teach)?.Count ?? 0,
            counts.FirstOrDefault(c => c.Pool == Pools.Test)?.Count ?? 0)));
    }

    /// <summary>
    /// Family <c>text</c>: embeds every item of the project, tracked or stored, whose text has no embedding from the
    /// current model yet (new and changed items, and items uploaded before the project became a text project), so
    /// each text is embedded once. The rows are saved by the caller, in the same transaction as the upload.
    /// </summary>
    public static async Task<int> EmbedTextsAsync(TeachServeDb db, string projectId, TextEmbeddings embeddings, CancellationToken ct)
    {
        var model = embeddings.ModelName;
        await db.Items.Where(i => i.ProjectId == projectId && (i.Embedding == null || i.EmbeddingModel != model)).LoadAsync(ct);
        var stale = db.ChangeTracker.Entries<Item>()
            .Where(e => e.Entity.ProjectId == projectId && e.State != EntityState.Deleted
                && (e.State is EntityState.Added or EntityState.Modified || e.Entity.Embedding is null || e.Entity.EmbeddingModel != model))
            .Select(e => e.Entity).ToList();
        var texts = stale.Select(i => Json.Deserialize<ItemDefinition>(i.Json).Content?.Text ?? "").ToList();
        var vectors = await embeddings.EmbedAsync(texts, ct);
        for (var i = 0; i < stale.Count; i++)
        {
            stale[i].Embedding = TextEmbeddings.ToBytes(vectors[i]);
            stale[i].EmbeddingModel = model;
        }
        return stale.Count;
    }

    /// <summary>Reads at most <paramref name="limit"/> bytes of UTF-8; more is 413, invalid UTF-8 is 400.</summary>
    private static async Task<string> ReadBodyAsync(HttpRequest request, long limit, CancellationToken ct)
    {
        if (request.ContentLength > limit) throw TooLarge(limit);
        if (request.HttpContext.Features.Get<IHttpMaxRequestBodySizeFeature>() is { IsReadOnly: false } size)
            size.MaxRequestBodySize = limit + 1;

        using var buffer = new MemoryStream();
        var chunk = new byte[81920];
        int read;
        while ((read = await request.Body.ReadAsync(chunk, ct)) > 0)
        {
            if (buffer.Length + read > limit) throw TooLarge(limit);
            buffer.Write(chunk, 0, read);
        }
        try
        {
            return new UTF8Encoding(false, throwOnInvalidBytes: true).GetString(buffer.GetBuffer(), 0, (int)buffer.Length);
        }
        catch (DecoderFallbackException)
        {
            throw ApiProblemException.BadRequest("The body is not valid UTF-8.");
        }
    }

    private static ApiProblemException TooLarge(long limit) =>
        ApiProblemException.TooLarge($"Uploads are limited to {limit} bytes; split the items into several uploads.")
            .With("limit", limit);
}
