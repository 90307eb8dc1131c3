using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;

namespace TeachServe.Server.Exposure;

/// <summary>One test item's exposure: sessions shown it, their share of tested sessions, and the K a session starting now gets.</summary>
public sealed record TestItemExposure(string ItemId, int Sessions, double? Rate, double AdministrationProbability);

/// <param name="MaxExposure">The exposure target of the newest ready version (1 = off), which starting sessions use.</param>
public sealed record TestExposureReport(int TestedSessions, double MaxExposure, int? ModelVersion, IReadOnlyList<TestItemExposure> Items);

/// <summary>The test-exposure route; <see cref="ExposureOperations"/> counts.</summary>
public static class TestExposureApi
{
    public static RouteGroupBuilder MapTestExposure(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/test-exposure").WithTags("Sessions");
        group.MapGet("/", GetExposure).RequireKey(KeyRole.Owner).WithName("getTestExposure")
            .WithSummary("How many tested sessions were shown each test item, most exposed first, with the exposure target and each item's administration probability.");
        return group;
    }

    public static async Task<Results<Ok<TestExposureReport>, ProblemHttpResult>> GetExposure(
        string projectId, ExposureOperations exposure, CancellationToken ct) =>
        (await exposure.ReportAsync(projectId, ct)).Answer(TypedResults.Ok);
}
