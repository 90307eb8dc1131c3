using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;

namespace TeachServe.Server.Events;

public static class EventsApi
{
    public static RouteGroupBuilder MapEvents(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/events").WithTags("Events");
        group.MapGet("/", ExportEvents).RequireKey(KeyRole.Owner).WithName("exportEvents")
            .Problem(StatusCodes.Status400BadRequest, "'after' is not an event id (0 or more).")
            .Produces(StatusCodes.Status200OK, contentType: EventOperations.MediaType)
            .WithSummary("The project's append-only event log as JSON Lines, oldest first, streamed; 'after' resumes from an event id.");
        return group;
    }

    public static async Task<Results<PushStreamHttpResult, ProblemHttpResult>> ExportEvents(
        string projectId, long? after, EventOperations events, CancellationToken ct)
    {
        var log = await events.OpenAsync(projectId, after, ct);
        if (!log.Succeeded) return log.Problem;
        return TypedResults.Stream(body => events.WriteJsonLinesAsync(log.Value, body, ct), EventOperations.MediaType);
    }
}
