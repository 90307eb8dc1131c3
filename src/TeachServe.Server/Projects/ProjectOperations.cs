using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Projects;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;
using TeachServe.Server.Webhooks;
using TeachServe.Server.Workers;

namespace TeachServe.Server.Projects;

/// <summary>
/// Creating projects, reading and patching their settings, and rotating or revoking their keys: what the API, the
/// owner console and the demo project do alike.
/// </summary>
public sealed class ProjectOperations(TeachServeDb db, TimeProvider time, WebhookSecrets secrets, ItemOperations items)
{
    public static ProjectSettings Settings(Project project) => Json.Deserialize<ProjectSettings>(project.SettingsJson);

    public Task<Project?> FindAsync(string projectId, CancellationToken ct) =>
        db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);

    /// <summary>A new project from a request body; its keys are in clear in the answer and never shown again.</summary>
    public async Task<Outcome<ProjectCreated>> CreateAsync(JsonNode? body, CancellationToken ct)
    {
        var document = ProjectDocument.Parse(body);
        if (!document.Succeeded) return document.Problem;
        var (_, created) = await CreateAsync(document.Value, ct);
        return created;
    }

    /// <summary>Stores a new project and returns its keys in clear, which are never shown again.</summary>
    public async Task<(Project, ProjectCreated)> CreateAsync(ProjectDocument document, CancellationToken ct)
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

    public async Task<ProjectView?> GetAsync(string projectId, CancellationToken ct) =>
        await FindAsync(projectId, ct) is { } project ? await ViewAsync(project, ct) : null;

    /// <summary>Applies a JSON merge patch (RFC 7386) of the project document; the project is stored only if the result is valid.</summary>
    public async Task<Outcome<ProjectView>> PatchAsync(string projectId, JsonNode? patch, CancellationToken ct)
    {
        var project = await db.Projects.FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        if (patch is not JsonObject)
            return Problems.BadRequest("The body must be a JSON merge patch object.");

        var current = Document(project);
        var parsed = ProjectDocument.Parse(
            ProjectDocument.MergePatch(current.ToJson(includeSecret: true), patch), current.ReleaseWebhook?.Secret);
        if (!parsed.Succeeded) return parsed.Problem;
        var patched = parsed.Value;

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
        return await ViewAsync(project, ct);
    }

    public ProjectDocument Document(Project project) =>
        new(Settings(project),
            project.WebhookUrl is { } url ? new ReleaseWebhookSettings { Url = url, Secret = secrets.Reveal(project.WebhookSecret) ?? "" } : null);

    /// <summary>Replaces the key of <paramref name="kind"/> (owner or embed) and records who did it; null if there is no such project.</summary>
    public async Task<KeyRotated?> RotateKeyAsync(string projectId, string kind, string by, CancellationToken ct)
    {
        var project = await db.Projects.FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return null;
        var key = kind == ProjectKeysApi.OwnerKind ? ApiKeys.NewOwnerKey(projectId) : ApiKeys.NewEmbedKey(projectId);
        var now = time.GetUtcNow();
        SetKeyHash(project, kind, ApiKeys.Hash(key), ProjectKeysApi.RotateAction, by, now);
        await db.SaveChangesAsync(ct);
        return new KeyRotated(projectId, kind, key, now);
    }

    /// <summary>
    /// Revokes the key of <paramref name="kind"/> and records who did it; false if there is no such project. A revoked
    /// key's hash is all zeros, which no key hashes to (SHA-256 preimage), so nothing matches it until it is rotated.
    /// </summary>
    public async Task<bool> RevokeKeyAsync(string projectId, string kind, string by, CancellationToken ct)
    {
        var project = await db.Projects.FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return false;
        SetKeyHash(project, kind, new byte[32], ProjectKeysApi.RevokeAction, by, time.GetUtcNow());
        await db.SaveChangesAsync(ct);
        return true;
    }

    /// <summary>The audit subject is the key (its kind), never the key's value or hash; the details say who acted (owner, admin, console).</summary>
    private void SetKeyHash(Project project, string kind, byte[] hash, string action, string by, DateTimeOffset now)
    {
        if (kind == ProjectKeysApi.OwnerKind) project.OwnerKeyHash = hash;
        else project.EmbedKeyHash = hash;
        project.UpdatedAt = now;
        db.Audit.Add(new AuditEntry
        {
            ProjectId = project.Id,
            Action = action,
            SubjectHash = $"key:{kind}",
            DetailsJson = Json.Serialize(new { kind, by }),
            At = now,
        });
    }

    private async Task<ProjectView> ViewAsync(Project project, CancellationToken ct)
    {
        var counts = await items.CountsAsync(project.Id, ct);
        var latest = await db.ModelVersions
            .Where(v => v.ProjectId == project.Id && v.Status == VersionStatuses.Ready)
            .MaxAsync(v => (int?)v.Number, ct);
        return new ProjectView(
            project.Id,
            project.Name,
            Settings(project),
            project.WebhookUrl is { } url ? new WebhookView(url, !string.IsNullOrEmpty(project.WebhookSecret)) : null,
            counts,
            latest,
            project.CreatedAt,
            project.UpdatedAt);
    }
}
