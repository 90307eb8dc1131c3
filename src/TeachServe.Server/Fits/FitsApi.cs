using System.Security.Claims;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Experiments;

namespace TeachServe.Server.Fits;

/// <summary>The fit routes; <see cref="FitOperations"/> does the work.</summary>
public static class FitsApi
{
    public static RouteGroupBuilder MapFits(this IEndpointRouteBuilder api)
    {
        var project = api.MapGroup("/projects/{projectId}/fits").WithTags("Fits");
        project.MapPost("/", CreateFit).RequireKey(KeyRole.Owner).WithName("createFit")
            .Produces<FitView>(StatusCodes.Status201Created)
            .Problem(StatusCodes.Status422UnprocessableEntity, "A setting is out of range, the version has no finished session with answers, or the fit took too long.")
            .WithSummary("Fit alpha and lapse to the finished sessions of a model version; calibration of predicted error.");

        var fit = api.MapGroup("/fits/{fitId}").WithTags("Fits");
        fit.MapGet("/", GetFit).RequireKey(KeyRole.Owner).WithName("getFit")
            .Produces<FitView>().Problem(StatusCodes.Status404NotFound, "No such fit.").WithSummary("Estimates, profile intervals and profiles, calibration table, Brier score.");
        fit.MapGet("/{file}", GetCalibrationPlot).RequireKey(KeyRole.Owner).WithName("getCalibrationPlot")
            .Produces(StatusCodes.Status200OK, responseType: null, PlotImages.SvgMediaType, PlotImages.PngMediaType)
            .Problem(StatusCodes.Status404NotFound, "No such fit, or no such plot name.").WithSummary("calibration.svg or calibration.png.");
        fit.MapPost("/apply", ApplyFit).RequireKey(KeyRole.Owner).WithName("applyFit")
            .Produces<FitView>().Problem(StatusCodes.Status404NotFound, "No such fit.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The fitted values are outside the ranges the settings allow.")
            .WithSummary("Write the fitted alpha and lapse into the project's learner settings; the next compiled version uses them.");
        return fit;
    }

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> CreateFit(
        string projectId, CreateFitRequest body, HttpResponse response, FitOperations fits, CancellationToken ct) =>
        (await fits.CreateAsync(projectId, body, ct)).Answer(fit =>
        {
            response.Headers.Location = $"/api/v1/fits/{fit.FitId}";
            return TypedResults.Text(fit.Json, "application/json", statusCode: StatusCodes.Status201Created);
        });

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> GetFit(
        string fitId, ClaimsPrincipal user, FitOperations fits, CancellationToken ct) =>
        (await fits.GetAsync(fitId, user, ct)).Answer(Json);

    public static async Task<Results<FileContentHttpResult, ProblemHttpResult>> GetCalibrationPlot(
        string fitId, string file, ClaimsPrincipal user, FitOperations fits, CancellationToken ct) =>
        (await fits.CalibrationPlotAsync(fitId, file, user, ct)).Answer(PlotImages.Render);

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> ApplyFit(
        string fitId, ClaimsPrincipal user, FitOperations fits, CancellationToken ct) =>
        (await fits.ApplyAsync(fitId, user, ct)).Answer(Json);

    private static ContentHttpResult Json(FitDocument fit) => TypedResults.Text(fit.Json, "application/json");
}
