using System.Security.Claims;
using System.Text.Json;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Fitting;
using TeachServe.Core.Projects;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Fits;

public static class FitsApi
{
    /// <summary>Inline fits are bounded so that one request cannot hold a worker thread for long.</summary>
    public const int MaxSessions = 5_000;
    public static readonly TimeSpan MaxDuration = TimeSpan.FromSeconds(60);

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
        string projectId, CreateFitRequest body, HttpContext http, TeachServeDb db, ModelVersionCache versions, TimeProvider time, CancellationToken ct)
    {
        if (!(body.Confidence is >= 0.5 and <= 0.999)) return Problems.Unprocessable("'confidence' must be in [0.5, 0.999].");
        if (body.CalibrationBins is < 2 or > 50) return Problems.Unprocessable("'calibrationBins' must be 2 to 50.");
        if (body.ModelVersion is < 1) return Problems.Unprocessable("'modelVersion' must be 1 or more.");
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        var number = body.ModelVersion ?? await db.ModelVersions
            .Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready).MaxAsync(v => (int?)v.Number, ct);
        if (number is null || !await db.ModelVersions.AnyAsync(v => v.ProjectId == projectId && v.Number == number && v.Status == VersionStatuses.Ready, ct))
            return Problems.NotFound("No such ready model version.");
        var version = await versions.GetAsync(projectId, number.Value, ct);
        var sessions = await FitSessions.LoadAsync(db, projectId, number.Value, MaxSessions, ct);
        if (sessions.Count == 0)
            return Problems.Unprocessable($"Model version {number} has no finished session with answers to fit.");

        using var limit = CancellationTokenSource.CreateLinkedTokenSource(ct);
        limit.CancelAfter(MaxDuration);
        FitResult fit;
        try
        {
            fit = await Task.Run(() => LearnerFit.Fit(version.Model, sessions, new FitOptions { Confidence = body.Confidence }, limit.Token), limit.Token);
        }
        catch (OperationCanceledException) when (!ct.IsCancellationRequested)
        {
            return Problems.Unprocessable($"The fit did not finish within {MaxDuration.TotalSeconds:0} s; fit fewer sessions (an older model version) instead.");
        }
        var calibration = Calibration.Compute(version.Model, sessions, new CalibrationOptions { Bins = body.CalibrationBins, Confidence = body.Confidence });

        var record = new LearnerFitRecord
        {
            Id = "fit_" + Ids.Base32(System.Security.Cryptography.RandomNumberGenerator.GetBytes(10)),
            ProjectId = projectId, ModelVersion = number.Value, ResultJson = "", CreatedAt = time.GetUtcNow(),
        };
        record.ResultJson = JsonSerializer.Serialize(new FitView(record.Id, projectId, number.Value, fit, calibration, record.CreatedAt, null), ReportJson.Options);
        db.Set<LearnerFitRecord>().Add(record);
        await db.SaveChangesAsync(ct);
        http.Response.StatusCode = StatusCodes.Status201Created;
        http.Response.Headers.Location = $"/api/v1/fits/{record.Id}";
        return TypedResults.Text(record.ResultJson, "application/json", statusCode: StatusCodes.Status201Created);
    }

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> GetFit(
        string fitId, ClaimsPrincipal user, TeachServeDb db, CancellationToken ct) =>
        await FindAsync(db, user, fitId, tracked: false, ct) is { } fit
            ? TypedResults.Text(WithApplied(fit), "application/json")
            : Problems.NotFound("No such fit.");

    public static async Task<Results<FileContentHttpResult, ProblemHttpResult>> GetCalibrationPlot(
        string fitId, string file, ClaimsPrincipal user, TeachServeDb db, CancellationToken ct)
    {
        if (!PlotImages.TryParse(file, out var name, out var format) || name != "calibration")
            return Problems.NotFound("No such plot; expected calibration.svg or calibration.png.");
        var fit = await FindAsync(db, user, fitId, tracked: false, ct);
        if (fit is null) return Problems.NotFound("No such fit.");
        var view = JsonSerializer.Deserialize<StoredCalibration>(fit.ResultJson, ReadOptions)!;
        return PlotImages.Render(FitPlots.Calibration(Calibration.ReliabilityPlot(view.Calibration), view.Calibration.BrierScore), format);
    }

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> ApplyFit(
        string fitId, ClaimsPrincipal user, TeachServeDb db, TimeProvider time, CancellationToken ct)
    {
        var fit = await FindAsync(db, user, fitId, tracked: true, ct);
        if (fit is null) return Problems.NotFound("No such fit.");
        using var doc = JsonDocument.Parse(fit.ResultJson);
        var estimates = doc.RootElement.GetProperty("fit");
        var alpha = estimates.GetProperty("alpha").GetDouble();
        var lapse = estimates.GetProperty("lapse").GetDouble();
        if ((SettingRules.LearnerAlpha(alpha) ?? SettingRules.LearnerLapse(lapse)) is { } problem)
            return Problems.Unprocessable($"The fitted values cannot be used as settings: {problem}.");

        var project = await db.Projects.FirstAsync(p => p.Id == fit.ProjectId, ct);
        var settings = ProjectOperations.Settings(project);
        project.SettingsJson = Json.Serialize(settings with { Learner = settings.Learner with { Alpha = alpha, Lapse = lapse } });
        var now = time.GetUtcNow();
        project.UpdatedAt = now;
        fit.AppliedAt = now;
        await db.SaveChangesAsync(ct);
        return TypedResults.Text(WithApplied(fit), "application/json");
    }

    private static readonly JsonSerializerOptions ReadOptions = new(ReportJson.Options) { UnmappedMemberHandling = System.Text.Json.Serialization.JsonUnmappedMemberHandling.Skip };

    private sealed record StoredCalibration(CalibrationReport Calibration);

    private static string WithApplied(LearnerFitRecord fit)
    {
        if (fit.AppliedAt is null) return fit.ResultJson;
        var node = System.Text.Json.Nodes.JsonNode.Parse(fit.ResultJson)!;
        node["appliedAt"] = fit.AppliedAt.Value;
        return node.ToJsonString();
    }

    private static async Task<LearnerFitRecord?> FindAsync(TeachServeDb db, ClaimsPrincipal user, string fitId, bool tracked, CancellationToken ct)
    {
        if (!Ids.LooksLike(fitId, "fit_")) return null;
        var query = tracked ? db.Set<LearnerFitRecord>() : db.Set<LearnerFitRecord>().AsNoTracking();
        var fit = await query.FirstOrDefaultAsync(f => f.Id == fitId, ct);
        if (fit is null) return null;
        return user.Role() == KeyRole.Admin || fit.ProjectId == user.ProjectId() ? fit : null;
    }
}
