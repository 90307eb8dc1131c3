using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Projects;
using TeachServe.Server.Auth;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Versions;

public sealed record VersionView(
    int Version, string Status, int TeachItems, int TestItems, JsonNode? Summary, string? Error,
    DateTimeOffset CreatedAt, DateTimeOffset? ReadyAt);

public static class VersionsApi
{
    public static RouteGroupBuilder MapVersions(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/versions").WithTags("Versions");
        group.MapPost("/", CreateVersion).RequireKey(KeyRole.Owner)
            .WithSummary("Compile the current items and settings into a new immutable model version (201 when done, 202 while it compiles in the background).");
        group.MapGet("/", ListVersions).RequireKey(KeyRole.Owner).WithSummary("All model versions, newest first.");
        group.MapGet("/{version:int}", GetVersion).RequireKey(KeyRole.Owner).WithSummary("One model version: status and compile summary.");
        return group;
    }

    public static async Task<Results<Created<VersionView>, Accepted<VersionView>, ProblemHttpResult>> CreateVersion(
        string projectId, TeachServeDb db, TimeProvider time, IOptions<TeachServeOptions> options,
        ModelVersionCache cache, VersionCompileQueue queue, ILogger<VersionCompileQueue> logger, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        var record = await SnapshotAsync(db, project, time, ct);
        var location = $"/api/v1/projects/{projectId}/versions/{record.Number}";
        if (record.TeachCount + record.TestCount > options.Value.Compile.InlineMaxItems)
        {
            queue.Enqueue(projectId, record.Number);
            return TypedResults.Accepted(location, View(record));
        }
        var compiled = await Task.Run(() => VersionCompiler.CompileInto(record, time, logger, ct), ct);
        await db.SaveChangesAsync(ct);
        if (compiled is null)
            return Problems.Unprocessable($"Compiling failed: {record.Error}", new Dictionary<string, object?> { ["version"] = record.Number });
        cache.Put(compiled);
        return TypedResults.Created(location, View(record));
    }

    /// <summary>Validates the whole project and stores its snapshot as the next version number, status <c>compiling</c>.</summary>
    public static async Task<ModelVersionRecord> SnapshotAsync(TeachServeDb db, Project project, TimeProvider time, CancellationToken ct)
    {
        var settings = ProjectsApi.Settings(project);
        var rows = await db.Items.AsNoTracking().Where(i => i.ProjectId == project.Id).OrderBy(i => i.ItemId)
            .Select(i => i.Json).ToListAsync(ct);
        var items = rows.Select(Json.Deserialize<ItemDefinition>).ToList();
        var problems = ProjectValidator.Validate(settings, items, new ProjectSources("project", "items"));
        if (problems.Count > 0)
            throw ApiProblemException.Unprocessable("The project cannot be compiled yet; nothing was created.")
                .With("errors", problems.Select(p => new FieldProblem(p.Field ?? p.File, p.Message)).ToList());

        for (var attempt = 0; ; attempt++)
        {
            var number = (await db.ModelVersions.Where(v => v.ProjectId == project.Id).MaxAsync(v => (int?)v.Number, ct) ?? 0) + 1;
            var record = new ModelVersionRecord
            {
                ProjectId = project.Id,
                Number = number,
                Status = VersionStatuses.Compiling,
                SettingsJson = Json.Serialize(settings),
                ItemsJson = VersionCompiler.WriteItems(items),
                TeachCount = items.Count(i => i.Pool == Pools.Teach),
                TestCount = items.Count(i => i.Pool == Pools.Test),
                CreatedAt = time.GetUtcNow(),
            };
            db.ModelVersions.Add(record);
            try
            {
                await db.SaveChangesAsync(ct);
                return record;
            }
            catch (DbUpdateException) when (attempt < 3)
            {
                // Another request took this number; take the next one.
                db.Entry(record).State = EntityState.Detached;
            }
        }
    }

    public static async Task<Ok<List<VersionView>>> ListVersions(string projectId, TeachServeDb db, CancellationToken ct)
    {
        var rows = await db.ModelVersions.AsNoTracking().Where(v => v.ProjectId == projectId)
            .OrderByDescending(v => v.Number).Take(Cursor.MaxLimit).ToListAsync(ct);
        return TypedResults.Ok(rows.Select(View).ToList());
    }

    public static async Task<Results<Ok<VersionView>, ProblemHttpResult>> GetVersion(
        string projectId, int version, TeachServeDb db, CancellationToken ct)
    {
        var row = await db.ModelVersions.AsNoTracking().FirstOrDefaultAsync(v => v.ProjectId == projectId && v.Number == version, ct);
        return row is null ? Problems.NotFound($"No model version {version}.") : TypedResults.Ok(View(row));
    }

    public static VersionView View(ModelVersionRecord v) => new(
        v.Number, v.Status, v.TeachCount, v.TestCount,
        v.SummaryJson is null ? null : JsonNode.Parse(v.SummaryJson), v.Error, v.CreatedAt, v.ReadyAt);
}
