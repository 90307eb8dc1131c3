using System.ComponentModel;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.LiveQuality;

/// <summary>The live-quality routes; <see cref="LiveQualityOperations"/> does the work.</summary>
public static class LiveQualityApi
{
    public static RouteGroupBuilder MapLiveQuality(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}").WithTags("Live quality");
        group.MapPost("/live-checks", PostLiveChecks).RequireKey(KeyRole.Embed).WithName("postLiveChecks")
            .Problem(StatusCodes.Status409Conflict, "An outcome id was stored earlier with a different body, or an item carried inline is stored under its id with other content or in another pool; 'errors' names each index. Nothing was stored.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The batch is empty or too long; outcomes name an unknown worker, item or label; an inline item fails the upload's checks; or the project would hold too many items. 'errors' names each index and field. Nothing was stored.")
            .WithSummary("Report live-check outcomes of released annotators (1 to 1,000, stored all or none); retry-safe by outcome id.");
        group.MapGet("/live-quality", ListLiveQuality).RequireKey(KeyRole.Owner).WithName("listLiveQuality")
            .Problem(StatusCodes.Status400BadRequest, "'status', 'cursor' or 'limit' is not valid.")
            .WithSummary("Annotators with live checks, by worker ref, optionally of one status; cursor-paged: status, checks, live error with its Wilson 95 % interval, last alarm.");
        group.MapGet("/live-quality/{workerRef}", GetLiveQuality).RequireKey(KeyRole.Owner).WithName("getLiveQuality")
            .Problem(StatusCodes.Status404NotFound, "No live checks of this worker in the project.")
            .WithSummary("One annotator's live quality and their outcomes in the order the monitor applied them (the newest 1,000).");
        group.MapPost("/live-quality/forgetting-fit", FitForgetting).RequireKey(KeyRole.Owner).WithName("fitForgettingRate")
            .Problem(StatusCodes.Status400BadRequest, "'confidence' is not in [0.5, 0.999].")
            .Problem(StatusCodes.Status404NotFound, "No such project.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "Too few live checks on the model's items to fit a rate (at least 100 are needed).")
            .WithSummary("Fit the project's forgetting rate (live.forgettingPerCheck) from its annotators' live records, with its profile-likelihood interval; 'apply' also stores it.");
        return group;
    }

    public static async Task<Results<Ok<ForgettingFitView>, ProblemHttpResult>> FitForgetting(
        string projectId, ForgettingFitRequest body, ForgettingFitOperations fits, CancellationToken ct) =>
        (await fits.FitAsync(projectId, body, ct)).Answer(TypedResults.Ok);

    public static async Task<Results<Ok<LiveChecksStored>, ProblemHttpResult>> PostLiveChecks(
        string projectId, LiveChecksRequest body, LiveQualityOperations live, HttpResponse response, CancellationToken ct)
    {
        var outcome = await live.PostAsync(projectId, body, ct);
        // The writer answers 503 when the database would not take the batch; the client retries it unchanged.
        if (outcome.Problem?.StatusCode == StatusCodes.Status503ServiceUnavailable)
            response.Headers.RetryAfter = ((int)DatabaseUnavailable.RetryAfter.TotalSeconds).ToString(System.Globalization.CultureInfo.InvariantCulture);
        return outcome.Answer(TypedResults.Ok);
    }

    public static async Task<Results<Ok<LiveQualityView>, ProblemHttpResult>> ListLiveQuality(
        string projectId,
        [Description("Only annotators of this status.")] string? status,
        [Description("The 'next' of the previous page.")] string? cursor,
        [Description("Annotators per page, 1 to 500 (default 50).")] int? limit,
        LiveQualityOperations live, CancellationToken ct) =>
        (await live.ListAsync(projectId, status, cursor, limit, ct)).Answer(TypedResults.Ok);

    public static async Task<Results<Ok<LiveAnnotatorHistory>, ProblemHttpResult>> GetLiveQuality(
        string projectId, string workerRef, LiveQualityOperations live, CancellationToken ct) =>
        (await live.HistoryAsync(projectId, workerRef, ct)).Answer(TypedResults.Ok);
}
