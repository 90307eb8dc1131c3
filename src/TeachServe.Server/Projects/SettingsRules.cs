using TeachServe.Core.Projects;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Projects;

/// <summary>One problem with a request document: where it is and why it is refused.</summary>
public sealed record FieldProblem(string Field, string Reason, int? Line = null);

/// <summary>Checks of project settings that the server needs before it stores them (ranges, sizes, names).</summary>
public static class SettingsRules
{
    public static List<FieldProblem> Check(ProjectDocument document)
    {
        var s = document.Settings;
        var errors = new List<FieldProblem>();
        void Require(bool ok, string field, string reason)
        {
            if (!ok) errors.Add(new FieldProblem(field, reason));
        }

        Require(!string.IsNullOrWhiteSpace(s.Name) && s.Name.Length <= ProjectLimits.NameLength,
            "name", $"must be 1 to {ProjectLimits.NameLength} characters");
        Require(s.Labels.Count is >= 2 and <= ProjectLimits.MaxLabels,
            "labels", $"must list 2 to {ProjectLimits.MaxLabels} labels");
        for (var i = 0; i < s.Labels.Count; i++)
            Require(!string.IsNullOrWhiteSpace(s.Labels[i]) && s.Labels[i].Length <= ProjectLimits.LabelLength,
                $"labels[{i}]", $"must be 1 to {ProjectLimits.LabelLength} characters");
        Require(s.Labels.Distinct(StringComparer.Ordinal).Count() == s.Labels.Count, "labels", "must be distinct");
        Require(FamilyKinds.All.Contains(s.Family.Kind), "family.kind", $"must be one of {string.Join(", ", FamilyKinds.All)}");
        Require(s.Family.RandomDirections is >= 0 and <= 100_000, "family.randomDirections", "must be 0 to 100000");
        Require(s.Family.PerturbedCopies is >= 0 and <= 10_000, "family.perturbedCopies", "must be 0 to 10000");
        Require(s.Family.MaxCues is >= 1 and <= 10, "family.maxCues", "must be 1 to 10");
        Require(s.Family.CandidateCues is >= 1 and <= 64, "family.candidateCues", "must be 1 to 64");
        Require(double.IsFinite(s.Family.SimplicityBias) && s.Family.SimplicityBias > 0, "family.simplicityBias", "must be positive");
        Require(PolicyNames.All.Contains(s.Policy), "policy", $"must be one of {string.Join(", ", PolicyNames.All)}");
        Require(double.IsFinite(s.BlendWeight) && s.BlendWeight is >= 0 and <= 100, "blendWeight", "must be 0 to 100");
        Require(double.IsFinite(s.Learner.Alpha) && s.Learner.Alpha is > 0 and <= 50, "learner.alpha", "must be in (0, 50]");
        Require(s.Learner.Lapse is >= 0 and <= 1, "learner.lapse", "must be in [0, 1]");
        var g = s.Gate;
        Require(g.TargetError is > 0 and < 1, "gate.targetError", "must be in (0, 1)");
        Require(g.Confidence is > 0 and < 1, "gate.confidence", "must be in (0, 1)");
        Require(g.MaxTeachingItems is >= 1 and <= 10_000, "gate.maxTeachingItems", "must be 1 to 10000");
        Require(g.Retakes is >= 0 and <= 20, "gate.retakes", "must be 0 to 20");
        Require(g.Test.Mode is TestModes.Sequential or TestModes.Fixed, "gate.test.mode", "must be 'sequential' or 'fixed'");
        Require(g.Test.MaxItems is >= 1 and <= 10_000, "gate.test.maxItems", "must be 1 to 10000");
        Require(g.Test.Delta is > 0 and < 1, "gate.test.delta", "must be in (0, 1)");
        Require(g.Test.Alpha is > 0 and < 0.5, "gate.test.alpha", "must be in (0, 0.5)");
        Require(g.Test.Beta is > 0 and < 0.5, "gate.test.beta", "must be in (0, 0.5)");

        if (document.ReleaseWebhook is { } hook)
        {
            Require(hook.Url.Length <= ProjectLimits.UrlLength
                    && Uri.TryCreate(hook.Url, UriKind.Absolute, out var uri) && uri.Scheme is "http" or "https",
                "releaseWebhook.url", "must be an absolute http or https URL");
            Require(hook.Secret.Length is >= ProjectLimits.MinSecretLength and <= ProjectLimits.SecretLength,
                "releaseWebhook.secret", $"must be {ProjectLimits.MinSecretLength} to {ProjectLimits.SecretLength} characters");
        }
        return errors;
    }

    public static ApiProblemException Invalid(string detail, IReadOnlyList<FieldProblem> errors) =>
        ApiProblemException.Unprocessable(detail).With("errors", errors);
}
