using System.Text.Json;
using System.Text.Json.Nodes;
using TeachServe.Core.Projects;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Projects;

/// <summary>
/// The body of <c>POST /projects</c> and the target of a merge patch: a <c>project.json</c> document plus
/// the server-only <c>releaseWebhook</c> setting.
/// </summary>
public sealed record ProjectDocument(ProjectSettings Settings, ReleaseWebhookSettings? ReleaseWebhook)
{
    public const string WebhookProperty = "releaseWebhook";

    /// <summary>The document of a request body, or the problem with it (400 for its shape, 422 naming each invalid field).</summary>
    /// <param name="keptSecret">The webhook secret the project already has (on a patch); it is not checked again.</param>
    public static Outcome<ProjectDocument> Parse(JsonNode? node, string? keptSecret = null)
    {
        if (node is not JsonObject obj)
            return Problems.BadRequest("The body must be a JSON object shaped like project.json.");
        obj = (JsonObject)obj.DeepClone();
        ReleaseWebhookSettings? webhook = null;
        if (obj.Remove(WebhookProperty, out var hook) && hook is not null)
        {
            var read = Read<ReleaseWebhookSettings>(hook, WebhookProperty);
            if (!read.Succeeded) return read.Problem;
            webhook = read.Value;
        }
        var settings = Read<ProjectSettings>(obj, "settings");
        if (!settings.Succeeded) return settings.Problem;
        var document = new ProjectDocument(settings.Value, webhook);
        var errors = SettingsRules.Check(document, keptSecret);
        if (errors.Count > 0)
            return Problems.Unprocessable("The project settings are not valid.", new Dictionary<string, object?> { ["errors"] = errors });
        return document;
    }

    public JsonObject ToJson(bool includeSecret)
    {
        var obj = JsonSerializer.SerializeToNode(Settings, Json.Options)!.AsObject();
        if (ReleaseWebhook is { } hook)
            obj[WebhookProperty] = includeSecret
                ? JsonSerializer.SerializeToNode(hook, Json.Options)
                : new JsonObject { ["url"] = hook.Url };
        return obj;
    }

    /// <summary>RFC 7386 JSON merge patch: objects merge recursively, null removes, anything else replaces.</summary>
    public static JsonNode? MergePatch(JsonNode? target, JsonNode? patch)
    {
        if (patch is not JsonObject patchObject) return patch?.DeepClone();
        var result = target is JsonObject t ? (JsonObject)t.DeepClone() : new JsonObject();
        foreach (var (name, value) in patchObject)
        {
            if (value is null) result.Remove(name);
            else result[name] = MergePatch(result[name], value);
        }
        return result;
    }

    private static Outcome<T> Read<T>(JsonNode node, string what)
    {
        try
        {
            return node.Deserialize<T>(Json.Options) is { } value
                ? value
                : Problems.BadRequest($"'{what}' must not be null.");
        }
        catch (JsonException e)
        {
            return Problems.BadRequest($"The {what} do not match the project.json shape: {ProblemText.Describe(e)}");
        }
    }
}
