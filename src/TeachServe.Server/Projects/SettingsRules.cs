using TeachServe.Core.Projects;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Projects;

/// <summary>One problem with a request document: where it is and why it is refused.</summary>
public sealed record FieldProblem(string Field, string Reason, int? Line = null);

/// <summary>
/// Settings checks: the engine's <see cref="ProjectValidator"/> (ranges, names, family) plus the bounds a shared
/// server needs (lengths) and the server-only webhook setting.
/// </summary>
public static class SettingsRules
{
    private const string SettingsSource = "project";

    /// <param name="keptSecret">The webhook secret the project already has, which passes as it is.</param>
    public static List<FieldProblem> Check(ProjectDocument document, string? keptSecret = null)
    {
        var s = document.Settings;
        var errors = ProjectValidator.Validate(s, [], new ProjectSources(SettingsSource, "items"))
            .Where(p => p.File == SettingsSource)
            .Select(p => new FieldProblem(p.Field ?? "settings", p.Message))
            .ToList();
        void Require(bool ok, string field, string reason)
        {
            if (!ok) errors.Add(new FieldProblem(field, reason));
        }

        Require(s.Name.Length <= ProjectLimits.NameLength, "name", $"must be at most {ProjectLimits.NameLength} characters");
        Require(s.Labels.All(l => l.Length <= ProjectLimits.LabelLength), "labels", $"each label has at most {ProjectLimits.LabelLength} characters");
        Require(s.Gate.MaxTeachingItems <= 10_000, "gate.maxTeachingItems", "must be at most 10000");
        Require(s.Gate.Test.MaxItems <= 10_000, "gate.test.maxItems", "must be at most 10000");
        Require(s.Gate.Retakes <= 100, "gate.retakes", "must be at most 100");
        Require(s.Family.RandomDirections <= 100_000, "family.randomDirections", "must be at most 100000");
        Require(s.Family.PerturbedCopies <= 10_000, "family.perturbedCopies", "must be at most 10000");
        Require(s.BlendWeight <= 1000, "blendWeight", "must be at most 1000");
        Require(s.Learner.Alpha <= 50, "learner.alpha", "must be at most 50 (larger values mean a learner that never keeps a wrong rule)");

        if (s.Completion is { } end)
        {
            Require((end.ReleasedMessage?.Length ?? 0) <= 2000, "completion.releasedMessage", "must be at most 2000 characters");
            Require((end.FailedMessage?.Length ?? 0) <= 2000, "completion.failedMessage", "must be at most 2000 characters");
            Require((end.ContinueLabel?.Length ?? 0) <= 200, "completion.continueLabel", "must be at most 200 characters");
            Require(end.ContinueUrl is null || (end.ContinueUrl.Length <= ProjectLimits.UrlLength
                    && Uri.TryCreate(end.ContinueUrl, UriKind.Absolute, out var next) && next.Scheme is "http" or "https"),
                "completion.continueUrl", "must be an absolute http or https URL");
        }

        if (document.ReleaseWebhook is { } hook)
        {
            Require(hook.Url.Length <= ProjectLimits.UrlLength
                    && Uri.TryCreate(hook.Url, UriKind.Absolute, out var uri) && uri.Scheme is "http" or "https",
                "releaseWebhook.url", "must be an absolute http or https URL");
            // A secret stored before the whsec_ form was required is kept as it is until the owner replaces it.
            Require((hook.Secret.Length > 0 && hook.Secret == keptSecret) || WebhookSigningKey.TryParse(hook.Secret, out _), "releaseWebhook.secret",
                $"must be {WebhookSigningKey.Prefix} followed by the base64 of {WebhookSigningKey.MinBytes} to {WebhookSigningKey.MaxBytes} random bytes " +
                "(Standard Webhooks), e.g. the output of: echo \"whsec_$(openssl rand -base64 32)\"");
        }
        return errors;
    }
}
