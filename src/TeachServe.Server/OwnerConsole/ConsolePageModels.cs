using Microsoft.AspNetCore.Components;
using TeachServe.Core.Projects;
using TeachServe.Server.Items;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>A console page: a component rendered from one model, so each page's inputs are checked when it is built.</summary>
public abstract class ConsolePage<TModel> : ComponentBase
{
    [Parameter, EditorRequired]
    public TModel Model { get; set; } = default!;
}

/// <summary>Problems shown beside the form that caused them: which form, a heading, and each problem (field, reason, line).</summary>
public sealed record FormProblems(string Form, string Heading, IReadOnlyList<FieldProblem> List);

/// <summary>The sign-in page, with a refusal or a notice (a new owner key, shown once).</summary>
public sealed record SignInModel(string FormToken, string? Error = null, string? Notice = null);

/// <summary>The onboarding page: live figures, pictures and one page of the session table, of one model version or all.</summary>
public sealed record OnboardingModel(
    string ProjectName, string FormToken, DateTimeOffset AsOf, OnboardingStats Stats, double TargetError, VersionFilter? Filter = null);

/// <summary>
/// The project page: item counts, model versions, settings and keys, with the outcome of the form just sent (a message
/// on top, problems beside the form) and, after refused settings, what the owner typed.
/// </summary>
public sealed record ProjectModel(
    string ProjectName,
    string FormToken,
    ProjectSettings Settings,
    IReadOnlyList<LabelCount> Counts,
    IReadOnlyList<ModelVersionRecord> Versions,
    string? Message = null,
    bool MessageIsError = false,
    FormProblems? Problems = null,
    IFormCollection? Typed = null);
