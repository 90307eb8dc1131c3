using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Projects;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Webhooks;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Projects;

public static class ProjectsApi
{
    public static RouteGroupBuilder MapProjects(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects").WithTags("Projects");
        group.MapPost("/", CreateProject).RequireKey(KeyRole.Admin).WithName("createProject")
            .AddOpenApiOperationTransformer(ProjectBodies.DescribeDocumentAsync)
            .Problem(StatusCodes.Status422UnprocessableEntity, "The settings are not valid; errors names the fields.")
            .WithSummary("Create a project from a project.json document (admin key); the response shows its keys once.");
        group.MapGet("/{projectId}", GetProject).RequireKey(KeyRole.Owner).WithName("getProject")
            .WithSummary("Read a project's settings, item counts and newest ready model version.");
        group.MapPatch("/{projectId}", PatchProject).RequireKey(KeyRole.Owner).WithName("patchProject")
            .AddOpenApiOperationTransformer(ProjectBodies.DescribeMergePatchAsync)
            .Problem(StatusCodes.Status422UnprocessableEntity, "The patched settings are not valid, or items still carry a label the patch removes.")
            .WithSummary("Change settings with a JSON merge patch (RFC 7386) of the project document.");
        return group;
    }

    public static async Task<Created<ProjectCreated>> CreateProject(
        JsonNode? body, TeachServeDb db, TimeProvider time, WebhookSecrets secrets, CancellationToken ct)
    {
        var document = ProjectDocument.Parse(body);
        var (project, created) = await CreateAsync(db, time, secrets, document, ct);
        return TypedResults.Created($"/api/v1/projects/{project.Id}", created);
    }

    /// <summary>Stores a new project and returns its keys in clear, which are never shown again.</summary>
    public static async Task<(Project, ProjectCreated)> CreateAsync(
        TeachServeDb db, TimeProvider time, WebhookSecrets secrets, ProjectDocument document, CancellationToken ct)
    {
        var id = Ids.NewProjectId();
        var ownerKey = ApiKeys.NewOwnerKey(id);
        var embedKey = ApiKeys.NewEmbedKey(id);
        var now = time.GetUtcNow();
        var project = new Project
        {
            Id = id,
            Name = document.Settings.Name,
            SettingsJson = Json.Serialize(document.Settings),
            OwnerKeyHash = ApiKeys.Hash(ownerKey),
            EmbedKeyHash = ApiKeys.Hash(embedKey),
            WebhookUrl = document.ReleaseWebhook?.Url,
            WebhookSecret = secrets.Protect(document.ReleaseWebhook?.Secret),
            CreatedAt = now,
            UpdatedAt = now,
        };
        db.Projects.Add(project);
        await db.SaveChangesAsync(ct);
        return (project, new ProjectCreated(id, project.Name, ownerKey, embedKey));
    }

    public static async Task<Results<Ok<ProjectView>, ProblemHttpResult>> GetProject(
        string projectId, TeachServeDb db, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        return TypedResults.Ok(await ViewAsync(db, project, ct));
    }

    public static async Task<Results<Ok<ProjectView>, ProblemHttpResult>> PatchProject(
        string projectId, JsonNode? body, TeachServeDb db, TimeProvider time, WebhookSecrets secrets, CancellationToken ct)
    {
        var project = await db.Projects.FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        if (body is not JsonObject)
            return Problems.BadRequest("The body must be a JSON merge patch object.");

        var current = Document(project, secrets);
        var patched = ProjectDocument.Parse(
            ProjectDocument.MergePatch(current.ToJson(includeSecret: true), body), current.ReleaseWebhook?.Secret);

        var removed = current.Settings.Labels.Except(patched.Settings.Labels, StringComparer.Ordinal).ToList();
        if (removed.Count > 0 && await db.Items.AnyAsync(i => i.ProjectId == projectId && removed.Contains(i.Label), ct))
            return Problems.Unprocessable(
                $"Items still carry the removed label(s) {string.Join(", ", removed)}; upload them with new labels first.");

        project.Name = patched.Settings.Name;
        project.SettingsJson = Json.Serialize(patched.Settings);
        project.WebhookUrl = patched.ReleaseWebhook?.Url;
        project.WebhookSecret = secrets.Protect(patched.ReleaseWebhook?.Secret);
        project.UpdatedAt = time.GetUtcNow();
        await db.SaveChangesAsync(ct);
        return TypedResults.Ok(await ViewAsync(db, project, ct));
    }

    public static ProjectDocument Document(Project project, WebhookSecrets secrets) =>
        new(Settings(project),
            project.WebhookUrl is { } url ? new ReleaseWebhookSettings { Url = url, Secret = secrets.Reveal(project.WebhookSecret) ?? "" } : null);

    public static ProjectSettings Settings(Project project) => Json.Deserialize<ProjectSettings>(project.SettingsJson);

    private static async Task<ProjectView> ViewAsync(TeachServeDb db, Project project, CancellationToken ct)
    {
        var counts = await db.Items.Where(i => i.ProjectId == project.Id)
            .GroupBy(i => i.Pool).Select(g => new { Pool = g.Key, Count = g.Count() }).ToListAsync(ct);
        var latest = await db.ModelVersions
            .Where(v => v.ProjectId == project.Id && v.Status == VersionStatuses.Ready)
            .MaxAsync(v => (int?)v.Number, ct);
        return new ProjectView(
            project.Id,
            project.Name,
            Settings(project),
            project.WebhookUrl is { } url ? new WebhookView(url, !string.IsNullOrEmpty(project.WebhookSecret)) : null,
            new ItemCounts(
                counts.FirstOrDefault(c => c.Pool == Pools.Teach)?.Count ?? 0,
                counts.FirstOrDefault(c => c.Pool == Pools.Test)?.Count ?? 0),
            latest,
            project.CreatedAt,
            project.UpdatedAt);
    }
}
