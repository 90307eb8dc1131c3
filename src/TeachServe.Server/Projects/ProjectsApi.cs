using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

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

    public static async Task<Results<Created<ProjectCreated>, ProblemHttpResult>> CreateProject(
        JsonNode? body, ProjectOperations projects, CancellationToken ct)
    {
        var created = await projects.CreateAsync(body, ct);
        if (!created.Succeeded) return created.Problem;
        return TypedResults.Created($"/api/v1/projects/{created.Value.ProjectId}", created.Value);
    }

    public static async Task<Results<Ok<ProjectView>, ProblemHttpResult>> GetProject(
        string projectId, ProjectOperations projects, CancellationToken ct) =>
        await projects.GetAsync(projectId, ct) is { } view ? TypedResults.Ok(view) : Problems.NotFound("No such project.");

    public static async Task<Results<Ok<ProjectView>, ProblemHttpResult>> PatchProject(
        string projectId, JsonNode? body, ProjectOperations projects, CancellationToken ct)
    {
        var patched = await projects.PatchAsync(projectId, body, ct);
        return patched.Succeeded ? TypedResults.Ok(patched.Value) : patched.Problem;
    }
}
