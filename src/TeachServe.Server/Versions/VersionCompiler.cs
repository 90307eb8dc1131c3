using System.Diagnostics;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Versions;

/// <summary>Turns a version row's snapshot into a model, for the first compile and for rebuilding on another node or after a restart.</summary>
public static partial class VersionCompiler
{
    public static (ProjectSettings Settings, List<ItemDefinition> Items) ReadSnapshot(ModelVersionRecord record)
    {
        var settings = Json.Deserialize<ProjectSettings>(record.SettingsJson);
        var items = record.ItemsJson.Split('\n', StringSplitOptions.RemoveEmptyEntries)
            .Select(Json.Deserialize<ItemDefinition>).ToList();
        if (record.Embeddings is { } block && record.EmbeddingDimension is > 0 and var dimension)
        {
            var width = dimension * sizeof(float);
            if (block.Length != items.Count * width)
                throw new InvalidDataException($"Version {record.Number} of {record.ProjectId} stores {block.Length} bytes of embeddings for {items.Count} items of {dimension} numbers.");
            for (var i = 0; i < items.Count; i++)
                items[i] = items[i] with { Embedding = Items.TextEmbeddings.FromBytes(block.AsSpan(i * width, width)) };
        }
        return (settings, items);
    }

    public static string WriteItems(IEnumerable<ItemDefinition> items) =>
        string.Join('\n', items.Select(Json.Serialize));

    public static CompiledVersion Build(ModelVersionRecord record, CancellationToken ct, IProgress<CompileProgress>? progress = null)
    {
        var (settings, items) = ReadSnapshot(record);
        var model = ModelCompiler.Compile(new ProjectDefinition(settings, items) { EmbeddingModel = record.EmbeddingModel }, progress, ct);
        return new CompiledVersion(record.ProjectId, record.Number, settings, model, items);
    }

    /// <summary>A ready version from its stored blob (fast), or rebuilt from its snapshot when it has none.</summary>
    public static CompiledVersion Load(ModelVersionRecord record, CancellationToken ct)
    {
        if (record.Blob is null) return Build(record, ct);
        var (settings, items) = ReadSnapshot(record);
        using var blob = new MemoryStream(record.Blob, writable: false);
        return new CompiledVersion(record.ProjectId, record.Number, settings, ModelVersionSerializer.Read(blob), items);
    }

    /// <summary>First compile of a version row: fills in status, fingerprint and summary (the caller saves).</summary>
    public static CompiledVersion? CompileInto(ModelVersionRecord record, TimeProvider time, ILogger logger, CancellationToken ct, IProgress<CompileProgress>? progress = null)
    {
        var watch = Stopwatch.StartNew();
        try
        {
            var compiled = Build(record, ct, progress);
            record.Status = VersionStatuses.Ready;
            using (var blob = new MemoryStream())
            {
                ModelVersionSerializer.Write(compiled.Model, blob);
                record.Blob = blob.ToArray();
            }
            record.HypothesisCount = compiled.Model.HypothesisCount;
            record.TargetIndex = compiled.Model.TargetIndex;
            record.SummaryJson = Json.Serialize(compiled.Model.Summary);
            record.ReadyAt = time.GetUtcNow();
            LogCompiled(logger, record.ProjectId, record.Number, compiled.Model.HypothesisCount, watch.ElapsedMilliseconds);
            return compiled;
        }
        catch (Exception e) when (e is not OperationCanceledException)
        {
            record.Status = VersionStatuses.Failed;
            record.Error = e.Message.Length > 4000 ? e.Message[..4000] : e.Message;
            LogCompileFailed(logger, e, record.ProjectId, record.Number);
            return null;
        }
    }

    /// <summary>Compiles a row that is still <c>compiling</c> (background job, or resumed after a restart) and saves it.</summary>
    public static async Task<CompiledVersion?> CompilePendingAsync(
        TeachServeDb db, string projectId, int number, ModelVersionCache cache, TimeProvider time, ILogger logger, CancellationToken ct,
        IProgress<CompileProgress>? progress = null)
    {
        var record = await db.ModelVersions.FirstOrDefaultAsync(v => v.ProjectId == projectId && v.Number == number, ct);
        if (record is not { Status: VersionStatuses.Compiling }) return null;
        var compiled = await Task.Run(() => CompileInto(record, time, logger, ct, progress), ct);
        await db.SaveChangesAsync(ct);
        if (compiled is not null) cache.Put(compiled);
        return compiled;
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Compiled {ProjectId} version {Number}: {Hypotheses} hypotheses in {Milliseconds} ms")]
    private static partial void LogCompiled(ILogger logger, string projectId, int number, int hypotheses, long milliseconds);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Compiling {ProjectId} version {Number} failed")]
    private static partial void LogCompileFailed(ILogger logger, Exception exception, string projectId, int number);
}
