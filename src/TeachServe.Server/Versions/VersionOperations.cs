using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Projects;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Versions;

/// <summary>How a compile request ended.</summary>
public enum CompileState
{
    /// <summary>Compiled now; new sessions use it.</summary>
    Compiled,
    /// <summary>Compiling in the background (a large project, or every compile slot taken).</summary>
    Compiling,
    /// <summary>A version of the same settings and items exists; nothing new was compiled.</summary>
    Existing,
    /// <summary>Another compile of the project is running: retry shortly.</summary>
    Busy,
    /// <summary>Not compiled: the project cannot be compiled yet, compiling failed, or it holds its most versions.</summary>
    Refused,
}

/// <summary>What a compile request came to: the version (compiled, compiling or existing), or the problem that says why not.</summary>
public sealed record CompileOutcome(CompileState State, VersionView? Version, ProblemHttpResult? Problem = null);

/// <summary>
/// Compiling a project's items and settings into immutable model versions and reading them back: what the API, the
/// owner console and the demo project do alike.
/// </summary>
public sealed class VersionOperations(
    TeachServeDb db, TimeProvider time, IOptions<TeachServeOptions> options, ModelVersionCache cache, VersionCompileQueue queue,
    CompileSlots slots, ItemOperations items, ILogger<VersionOperations> logger)
{
    public static string Location(string projectId, int number) => $"/api/v1/projects/{projectId}/versions/{number}";

    /// <summary>
    /// Compiles the current items and settings: at once when small and a compile slot is free, otherwise in the
    /// background; an identical earlier snapshot answers with its version instead.
    /// </summary>
    public async Task<CompileOutcome> CompileAsync(string projectId, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return new(CompileState.Refused, null, Problems.NotFound("No such project."));
        using var claim = slots.TryClaimProject(projectId);
        if (claim is null)
            return new(CompileState.Busy, null, Problems.Conflict("Another compile request of this project is being handled; retry when it has answered."));
        var limits = options.Value.Compile;
        var snapshot = await ReadSnapshotAsync(project, ct);
        if (!snapshot.Succeeded) return new(CompileState.Refused, null, snapshot.Problem);
        var reservation = await ReserveAsync(projectId, snapshot.Value, limits.MaxVersionsPerProject, ct);
        switch (reservation)
        {
            case { Kind: ReservationKind.Existing, Record: { Status: VersionStatuses.Compiling } running }:
                return new(CompileState.Compiling, View(running));
            case { Kind: ReservationKind.Existing, Record: { } same }:
                return new(CompileState.Existing, View(same));
            case { Kind: ReservationKind.Busy }:
                return new(CompileState.Busy, null, Problems.Conflict(reservation.Record is { } busy
                        ? $"Version {busy.Number} of this project is compiling; compile again when it is ready (GET {Location(projectId, busy.Number)})."
                        : "Another compile of this project is starting; retry shortly.",
                    new Dictionary<string, object?> { ["version"] = reservation.Record?.Number }));
            case { Kind: ReservationKind.Full }:
                return new(CompileState.Refused, null, Problems.Conflict(
                    $"This project holds {limits.MaxVersionsPerProject} model versions, the most a project may have " +
                    "(TeachServe:Compile:MaxVersionsPerProject); nothing was created.",
                    new Dictionary<string, object?> { ["limit"] = limits.MaxVersionsPerProject }));
        }

        var record = reservation.Record!;
        if (record.TeachCount + record.TestCount > limits.InlineMaxItems || !slots.TryEnter())
        {
            queue.Enqueue(projectId, record.Number);
            return new(CompileState.Compiling, View(record) with { Progress = 0 });
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
            return new(CompileState.Refused, null,
                Problems.Unprocessable($"Compiling failed: {record.Error}", new Dictionary<string, object?> { ["version"] = record.Number }));
        cache.Put(compiled);
        return new(CompileState.Compiled, View(record));
    }

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

    /// <summary>Validates the whole project and reads its snapshot, or says why it cannot be compiled (422 naming each problem).</summary>
    public async Task<Outcome<Snapshot>> ReadSnapshotAsync(Project project, CancellationToken ct)
    {
        var settings = ProjectOperations.Settings(project);
        var text = settings.Family.Kind == FamilyKinds.Text;
        // A text project's items lacking an embedding from the current model (uploaded before it became a text
        // project) are embedded first, so the one read below has every vector beside its item.
        if (text && await items.EmbedTextsAsync(project.Id, ct) > 0)
            await db.SaveChangesAsync(ct);
        // Live-check items are never compiled: a version holds the same items, and hashes the same, with or without them.
        var rows = await db.Items.AsNoTracking().Where(i => i.ProjectId == project.Id && i.Pool != Pools.Live).OrderBy(i => i.ItemId)
            .Select(i => new { i.Json, Embedding = text ? i.Embedding : null, i.EmbeddingModel }).ToListAsync(ct);
        var definitions = rows.Select(r => Json.Deserialize<ItemDefinition>(r.Json)).ToList();
        var sources = new ProjectSources("project", "items");
        var problems = ProjectValidator.Validate(settings, definitions, sources);
        if (problems.Count == 0 && ProjectValidator.TestPool(settings, definitions, sources) is { } pool)
            problems = [pool];
        if (problems.Count > 0)
            return Problems.Unprocessable("The project cannot be compiled yet; nothing was created.",
                new Dictionary<string, object?> { ["errors"] = problems.Select(p => new FieldProblem(p.Field ?? p.File, p.Message)).ToList() });

        var settingsJson = Json.Serialize(settings);
        var itemsJson = VersionCompiler.WriteItems(definitions);
        byte[]? block = null;
        string? model = null;
        int? dimension = null;
        if (text)
        {
            model = items.EmbeddingModel;
            if (rows.Any(r => r.Embedding is null || r.EmbeddingModel != model))
                return Problems.Conflict("Items were uploaded while this compile read the project; compile again.");
            block = rows.SelectMany(r => r.Embedding!).ToArray();
            dimension = rows.Count == 0 ? 0 : rows[0].Embedding!.Length / sizeof(float);
        }
        // Settings and items are hashed apart (length-prefixed), so no split of one string could match another; the
        // embedding model is hashed too, so a server with another model compiles a new version.
        var bytes = System.Text.Encoding.UTF8.GetBytes($"{settingsJson.Length}:{settingsJson}\n{itemsJson}\n{model}");
        var hash = Convert.ToHexStringLower(System.Security.Cryptography.SHA256.HashData(bytes));
        return new Snapshot(settingsJson, itemsJson,
            definitions.Count(i => i.Pool == Pools.Teach), definitions.Count(i => i.Pool == Pools.Test), hash)
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
    public async Task<Reservation> ReserveAsync(string projectId, Snapshot snapshot, int maxVersions, CancellationToken ct)
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

    /// <summary>Snapshot, reserve and compile in one call, for start-up work that runs alone (the demo project).</summary>
    public async Task<Outcome<CompiledVersion>> CompileNowAsync(Project project, CancellationToken ct)
    {
        var snapshot = await ReadSnapshotAsync(project, ct);
        if (!snapshot.Succeeded) return snapshot.Problem;
        var reservation = await ReserveAsync(project.Id, snapshot.Value, int.MaxValue, ct);
        if (reservation is not { Kind: ReservationKind.Created, Record: { } record })
            return Problems.Conflict($"Project {project.Id} could not take a new version number ({reservation.Kind}).");
        var compiled = VersionCompiler.CompileInto(record, time, logger, ct);
        await db.SaveChangesAsync(ct);
        if (compiled is null) return Problems.Unprocessable($"Compiling failed: {record.Error}");
        cache.Put(compiled);
        return compiled;
    }

    /// <summary>The project's newest model versions, newest first.</summary>
    public Task<List<ModelVersionRecord>> LatestAsync(string projectId, int count, CancellationToken ct) =>
        db.ModelVersions.AsNoTracking().Where(v => v.ProjectId == projectId)
            .OrderByDescending(v => v.Number).Take(count).ToListAsync(ct);

    public async Task<List<VersionView>> ListAsync(string projectId, CancellationToken ct) =>
        (await LatestAsync(projectId, Cursor.MaxLimit, ct)).Select(WithProgress).ToList();

    public async Task<VersionView?> GetAsync(string projectId, int version, CancellationToken ct) =>
        await db.ModelVersions.AsNoTracking().FirstOrDefaultAsync(v => v.ProjectId == projectId && v.Number == version, ct) is { } row
            ? WithProgress(row)
            : null;

    /// <summary>The prior's predicted error of the newest ready version (the error before any teaching), if there is one.</summary>
    public async Task<double?> StartingErrorAsync(string projectId, CancellationToken ct)
    {
        var summary = await db.ModelVersions.AsNoTracking()
            .Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready)
            .OrderByDescending(v => v.Number).Select(v => v.SummaryJson).FirstOrDefaultAsync(ct);
        return summary is null ? null : Json.Deserialize<TeachServe.Core.Model.ModelSummary>(summary).PriorExpectedError;
    }

    /// <summary>The view with the percent done while this node compiles the version in the background (<c>progress</c>, 0–100).</summary>
    private VersionView WithProgress(ModelVersionRecord v) =>
        View(v) with { Progress = v.Status == VersionStatuses.Compiling ? queue.Percent(v.ProjectId, v.Number) : null };

    public static VersionView View(ModelVersionRecord v) => new(
        v.Number, v.Status, v.TeachCount, v.TestCount,
        v.SummaryJson is null ? null : JsonNode.Parse(v.SummaryJson), v.Error, v.CreatedAt, v.ReadyAt);
}
