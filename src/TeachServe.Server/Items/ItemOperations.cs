using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Projects;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Items;

/// <summary>Items per pool, and per label within each pool.</summary>
public sealed record LabelCount(string Pool, string Label, int Count);

/// <summary>
/// Reading, checking and storing uploaded items, and counting them: the API's upload and the console's file picker
/// share it, so a file is read and judged the same way wherever it comes from.
/// </summary>
public sealed class ItemOperations(TeachServeDb db, TimeProvider time, IOptions<TeachServeOptions> options, TextEmbeddings embeddings)
{
    public UploadOptions Limits => options.Value.Uploads;

    /// <summary>The sentence model whose embeddings text projects compile with.</summary>
    public string EmbeddingModel => embeddings.ModelName;

    /// <summary>
    /// Reads <paramref name="text"/> in <paramref name="format"/>, checks every item against the project's settings
    /// and upserts them by id in one transaction; with any problem (each named by line and field) nothing is stored.
    /// </summary>
    public async Task<Outcome<ItemUploadResult>> UploadAsync(string projectId, ItemUploadFormat format, string text, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        var settings = ProjectOperations.Settings(project);
        var parsed = ItemParsing.Read(format, text, settings, Limits.MaxItemsPerUpload);
        if (parsed.Problems.Count > 0)
            return Problems.Unprocessable(
                $"{parsed.Problems.Count} problem(s) found; nothing was stored.",
                new Dictionary<string, object?> { ["errors"] = parsed.Problems });
        return await StoreAsync(projectId, settings, parsed.Items, ct);
    }

    /// <summary>Upserts checked items by id in one transaction (an upload, or the demo project's items).</summary>
    public async Task<Outcome<ItemUploadResult>> StoreAsync(
        string projectId, ProjectSettings settings, IReadOnlyList<ItemDefinition> items, CancellationToken ct)
    {
        var ids = items.Select(i => i.Id).ToList();
        var existing = await db.Items.Where(i => i.ProjectId == projectId && ids.Contains(i.ItemId))
            .ToDictionaryAsync(i => i.ItemId, StringComparer.Ordinal, ct);
        var stored = await db.Items.CountAsync(i => i.ProjectId == projectId, ct);
        var newCount = items.Count(i => !existing.ContainsKey(i.Id));
        if (stored + newCount > Limits.MaxItemsPerProject)
            return Problems.Unprocessable(
                $"A project may hold at most {Limits.MaxItemsPerProject} items; this upload would make {stored + newCount}.");

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
            await EmbedTextsAsync(projectId, ct);
        // One SaveChanges is one transaction: the upload is stored whole or not at all.
        await db.SaveChangesAsync(ct);
        return new ItemUploadResult(items.Count, created, updated, unchanged, await CountsAsync(projectId, ct));
    }

    /// <summary>The project's items in the teach, the test and the live pool.</summary>
    public async Task<ItemCounts> CountsAsync(string projectId, CancellationToken ct)
    {
        var counts = await db.Items.Where(i => i.ProjectId == projectId)
            .GroupBy(i => i.Pool).Select(g => new { Pool = g.Key, Count = g.Count() }).ToListAsync(ct);
        return new ItemCounts(
            counts.FirstOrDefault(c => c.Pool == Pools.Teach)?.Count ?? 0,
            counts.FirstOrDefault(c => c.Pool == Pools.Test)?.Count ?? 0,
            counts.FirstOrDefault(c => c.Pool == Pools.Live)?.Count ?? 0);
    }

    /// <summary>The project's items by pool and label (labels without items are absent).</summary>
    public Task<List<LabelCount>> CountsByLabelAsync(string projectId, CancellationToken ct) =>
        db.Items.AsNoTracking().Where(i => i.ProjectId == projectId)
            .GroupBy(i => new { i.Pool, i.Label }).Select(g => new LabelCount(g.Key.Pool, g.Key.Label, g.Count())).ToListAsync(ct);

    /// <summary>
    /// Family <c>text</c>: embeds every compiled item of the project (live-check items are never compiled), tracked or stored, whose text has no embedding from the
    /// current model yet (new and changed items, and items uploaded before the project became a text project), so
    /// each text is embedded once. The rows are saved by the caller, in the same transaction as the upload.
    /// </summary>
    public async Task<int> EmbedTextsAsync(string projectId, CancellationToken ct)
    {
        var model = embeddings.ModelName;
        await db.Items.Where(i => i.ProjectId == projectId && i.Pool != Pools.Live && (i.Embedding == null || i.EmbeddingModel != model)).LoadAsync(ct);
        var stale = db.ChangeTracker.Entries<Item>()
            .Where(e => e.Entity.ProjectId == projectId && e.State != EntityState.Deleted && e.Entity.Pool != Pools.Live
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
}
