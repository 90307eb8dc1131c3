using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Projects;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Versions;

public sealed record VersionView(
    int Version, string Status, int TeachItems, int TestItems, JsonNode? Summary, string? Error,
    DateTimeOffset CreatedAt, DateTimeOffset? ReadyAt, double? Progress = null);

public static class VersionsApi
{
    public static RouteGroupBuilder MapVersions(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/versions").WithTags("Versions");
        group.MapPost("/", CreateVersion).RequireKey(KeyRole.Owner).WithName("compileVersion")
            .Problem(StatusCodes.Status409Conflict, "Another compile of the project is running, or the project holds its most versions (Retry-After while busy).")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The items and settings cannot be compiled yet, or compiling failed; errors names the problems.")
            .WithSummary("Compile the current items and settings into a new immutable model version (201 when done; 202 while it compiles in the background; 200 with the existing version when the same settings and items were compiled before; 409 while another compile of the project runs or when the project holds its most versions).");
        group.MapGet("/", ListVersions).RequireKey(KeyRole.Owner).WithName("listVersions").WithSummary("All model versions, newest first.");
        group.MapGet("/{version:int}", GetVersion).RequireKey(KeyRole.Owner).WithName("getVersion").WithSummary("One model version: status and compile summary.");
        return group;
    }

    public static async Task<Results<Created<VersionView>, Accepted<VersionView>, Ok<VersionView>, ProblemHttpResult>> CreateVersion(
        string projectId, TeachServeDb db, TimeProvider time, IOptions<TeachServeOptions> options,
        ModelVersionCache cache, VersionCompileQueue queue, CompileSlots slots, ILogger<VersionCompileQueue> logger,
        TextEmbeddings embeddings, HttpResponse response, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        using var claim = slots.TryClaimProject(projectId);
        if (claim is null)
        {
            response.Headers.RetryAfter = "5";
            return Problems.Conflict("Another compile request of this project is being handled; retry when it has answered.");
        }
        var limits = options.Value.Compile;
        var snapshot = await ReadSnapshotAsync(db, project, embeddings, ct);
        var reservation = await ReserveAsync(db, projectId, snapshot, limits.MaxVersionsPerProject, time, ct);
        switch (reservation)
        {
            case { Kind: ReservationKind.Existing, Record: { Status: VersionStatuses.Compiling } running }:
                return TypedResults.Accepted(Location(projectId, running.Number), View(running));
            case { Kind: ReservationKind.Existing, Record: { } same }:
                response.Headers.Location = Location(projectId, same.Number);
                return TypedResults.Ok(View(same));
            case { Kind: ReservationKind.Busy }:
                response.Headers.RetryAfter = "5";
                return Problems.Conflict(reservation.Record is { } busy
                        ? $"Version {busy.Number} of this project is compiling; compile again when it is ready (GET {Location(projectId, busy.Number)})."
                        : "Another compile of this project is starting; retry shortly.",
                    new Dictionary<string, object?> { ["version"] = reservation.Record?.Number });
            case { Kind: ReservationKind.Full }:
                return Problems.Conflict(
                    $"This project holds {limits.MaxVersionsPerProject} model versions, the most a project may have " +
                    "(TeachServe:Compile:MaxVersionsPerProject); nothing was created.",
                    new Dictionary<string, object?> { ["limit"] = limits.MaxVersionsPerProject });
        }

        var record = reservation.Record!;
        var location = Location(projectId, record.Number);
        if (record.TeachCount + record.TestCount > limits.InlineMaxItems || !slots.TryEnter())
        {
            queue.Enqueue(projectId, record.Number);
            return TypedResults.Accepted(location, View(record) with { Progress = 0 });
        }
        CompiledVersion? compiled;
        try
        {
            compiled = await Task.Run(() => VersionCompiler.CompileInto(record, time, logger, ct), ct);
            await db.SaveChangesAsync(ct);
        }
        catch (Exception)
        {
            // The row is still 'compiling' (the client left, or the database failed): finish it in the background,
            // or the project could not compile again until a restart.
            queue.Enqueue(projectId, record.Number);
            throw;
        }
        finally
        {
            slots.Exit();
        }
        if (compiled is null)
            return Problems.Unprocessable($"Compiling failed: {record.Error}", new Dictionary<string, object?> { ["version"] = record.Number });
        cache.Put(compiled);
        return TypedResults.Created(location, View(record));
    }

    private static string Location(string projectId, int number) => $"/api/v1/projects/{projectId}/versions/{number}";

    /// <summary>A project's settings and items as one compile would see them.</summary>
    public sealed record Snapshot(string SettingsJson, string ItemsJson, int TeachCount, int TestCount, string Hash)
    {
        /// <summary>Family <c>text</c>: the item embeddings in <see cref="ItemsJson"/> order, their model and length.</summary>
        public byte[]? Embeddings { get; init; }
        public string? EmbeddingModel { get; init; }
        public int? EmbeddingDimension { get; init; }
    }

    public enum ReservationKind
    {
        /// <summary>A new row, status <c>compiling</c>, for the caller to compile.</summary>
        Created,
        /// <summary>A version of identical settings and items exists (ready or compiling); nothing was created.</summary>
        Existing,
        /// <summary>Another version of this project is compiling.</summary>
        Busy,
        /// <summary>The project has as many versions as it may.</summary>
        Full,
    }

    public sealed record Reservation(ReservationKind Kind, ModelVersionRecord? Record);

    /// <summary>Validates the whole project and reads its snapshot; throws 422 problem details when it cannot be compiled.</summary>
    public static async Task<Snapshot> ReadSnapshotAsync(TeachServeDb db, Project project, TextEmbeddings? embeddings, CancellationToken ct)
    {
        var settings = ProjectsApi.Settings(project);
        var text = settings.Family.Kind == FamilyKinds.Text;
        // A text project's items lacking an embedding from the current model (uploaded before it became a text
        // project) are embedded first, so the one read below has every vector beside its item.
        if (text && await ItemsApi.EmbedTextsAsync(db, project.Id,
                embeddings ?? throw new InvalidOperationException("Text projects need the embedder."), ct) > 0)
            await db.SaveChangesAsync(ct);
        var rows = await db.Items.AsNoTracking().Where(i => i.ProjectId == project.Id).OrderBy(i => i.ItemId)
            .Select(i => new { i.Json, Embedding = text ? i.Embedding : null, i.EmbeddingModel }).ToListAsync(ct);
        var items = rows.Select(r => Json.Deserialize<ItemDefinition>(r.Json)).ToList();
        var sources = new ProjectSources("project", "items");
        var problems = ProjectValidator.Validate(settings, items, sources);
        if (problems.Count == 0 && ProjectValidator.TestPool(settings, items, sources) is { } pool)
            problems = [pool];
        if (problems.Count > 0)
            throw ApiProblemException.Unprocessable("The project cannot be compiled yet; nothing was created.")
                .With("errors", problems.Select(p => new FieldProblem(p.Field ?? p.File, p.Message)).ToList());

        var settingsJson = Json.Serialize(settings);
        var itemsJson = VersionCompiler.WriteItems(items);
        byte[]? block = null;
        string? model = null;
        int? dimension = null;
        if (text)
        {
            model = embeddings!.ModelName;
            if (rows.Any(r => r.Embedding is null || r.EmbeddingModel != model))
                throw ApiProblemException.Conflict("Items were uploaded while this compile read the project; compile again.");
            block = rows.SelectMany(r => r.Embedding!).ToArray();
            dimension = rows.Count == 0 ? 0 : rows[0].Embedding!.Length / sizeof(float);
        }
        // Settings and items are hashed apart (length-prefixed), so no split of one string could match another; the
        // embedding model is hashed too, so a server with another model compiles a new version.
        var bytes = System.Text.Encoding.UTF8.GetBytes($"{settingsJson.Length}:{settingsJson}\n{itemsJson}\n{model}");
        var hash = Convert.ToHexStringLower(System.Security.Cryptography.SHA256.HashData(bytes));
        return new Snapshot(settingsJson, itemsJson,
            items.Count(i => i.Pool == Pools.Teach), items.Count(i => i.Pool == Pools.Test), hash)
        {
            Embeddings = block, EmbeddingModel = model, EmbeddingDimension = dimension,
        };
    }

    /// <summary>
    /// Takes the next version number for a snapshot, or says why not. The database decides every race: the
    /// primary key (project, number) refuses a number taken twice, and a unique index over the project's
    /// <c>compiling</c> rows refuses a second compile, whichever node it comes from; the loser reads again and
    /// finds the winner's row.
    /// </summary>
    public static async Task<Reservation> ReserveAsync(
        TeachServeDb db, string projectId, Snapshot snapshot, int maxVersions, TimeProvider time, CancellationToken ct)
    {
        const int attempts = 8;
        for (var attempt = 0; attempt < attempts; attempt++)
        {
            var rivals = await db.ModelVersions.AsNoTracking()
                .Where(v => v.ProjectId == projectId
                    && (v.Status == VersionStatuses.Compiling || (v.Status == VersionStatuses.Ready && v.SnapshotHash == snapshot.Hash)))
                .OrderByDescending(v => v.Number)
                .Select(v => new { v.Number, v.Status, v.SnapshotHash, v.TeachCount, v.TestCount, v.SummaryJson, v.Error, v.CreatedAt, v.ReadyAt })
                .ToListAsync(ct);
            var rows = rivals.Select(v => new ModelVersionRecord
            {
                ProjectId = projectId, Number = v.Number, Status = v.Status, SnapshotHash = v.SnapshotHash,
                SettingsJson = "", ItemsJson = "", TeachCount = v.TeachCount, TestCount = v.TestCount,
                SummaryJson = v.SummaryJson, Error = v.Error, CreatedAt = v.CreatedAt, ReadyAt = v.ReadyAt,
            }).ToList();
            if (rows.FirstOrDefault(v => v.SnapshotHash == snapshot.Hash) is { } same) return new(ReservationKind.Existing, same);
            if (rows.FirstOrDefault(v => v.Status == VersionStatuses.Compiling) is { } running) return new(ReservationKind.Busy, running);

            var count = await db.ModelVersions.CountAsync(v => v.ProjectId == projectId, ct);
            if (count >= maxVersions) return new(ReservationKind.Full, null);
            var number = (await db.ModelVersions.Where(v => v.ProjectId == projectId).MaxAsync(v => (int?)v.Number, ct) ?? 0) + 1;
            var record = new ModelVersionRecord
            {
                ProjectId = projectId,
                Number = number,
                Status = VersionStatuses.Compiling,
                SettingsJson = snapshot.SettingsJson,
                ItemsJson = snapshot.ItemsJson,
                SnapshotHash = snapshot.Hash,
                Embeddings = snapshot.Embeddings,
                EmbeddingModel = snapshot.EmbeddingModel,
                EmbeddingDimension = snapshot.EmbeddingDimension,
                TeachCount = snapshot.TeachCount,
                TestCount = snapshot.TestCount,
                CreatedAt = time.GetUtcNow(),
            };
            db.ModelVersions.Add(record);
            try
            {
                await db.SaveChangesAsync(ct);
                return new(ReservationKind.Created, record);
            }
            catch (DbUpdateException e) when (!DatabaseUnavailable.Is(e))
            {
                // Another request took this number or started a compile of this project: read again.
                db.Entry(record).State = EntityState.Detached;
            }
        }
        return new(ReservationKind.Busy, null);
    }

    /// <summary>Snapshot and reserve in one call, for start-up work that runs alone (the demo project).</summary>
    public static async Task<ModelVersionRecord> SnapshotAsync(TeachServeDb db, Project project, TimeProvider time, CancellationToken ct)
    {
        var snapshot = await ReadSnapshotAsync(db, project, embeddings: null, ct);
        var reservation = await ReserveAsync(db, project.Id, snapshot, int.MaxValue, time, ct);
        return reservation is { Kind: ReservationKind.Created, Record: { } record }
            ? record
            : throw new InvalidOperationException($"Project {project.Id} could not take a new version number ({reservation.Kind}).");
    }

    public static async Task<Ok<List<VersionView>>> ListVersions(string projectId, TeachServeDb db, VersionCompileQueue queue, CancellationToken ct)
    {
        var rows = await db.ModelVersions.AsNoTracking().Where(v => v.ProjectId == projectId)
            .OrderByDescending(v => v.Number).Take(Cursor.MaxLimit).ToListAsync(ct);
        return TypedResults.Ok(rows.Select(v => View(v, queue)).ToList());
    }

    public static async Task<Results<Ok<VersionView>, ProblemHttpResult>> GetVersion(
        string projectId, int version, TeachServeDb db, VersionCompileQueue queue, CancellationToken ct)
    {
        var row = await db.ModelVersions.AsNoTracking().FirstOrDefaultAsync(v => v.ProjectId == projectId && v.Number == version, ct);
        return row is null ? Problems.NotFound($"No model version {version}.") : TypedResults.Ok(View(row, queue));
    }

    /// <summary>The view with the percent done while this node compiles the version in the background (<c>progress</c>, 0–100).</summary>
    public static VersionView View(ModelVersionRecord v, VersionCompileQueue queue) =>
        View(v) with { Progress = v.Status == VersionStatuses.Compiling ? queue.Percent(v.ProjectId, v.Number) : null };

    public static VersionView View(ModelVersionRecord v) => new(
        v.Number, v.Status, v.TeachCount, v.TestCount,
        v.SummaryJson is null ? null : JsonNode.Parse(v.SummaryJson), v.Error, v.CreatedAt, v.ReadyAt);
}
