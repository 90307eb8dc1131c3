using System.Security.Claims;
using System.Text.Json;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Fitting;
using TeachServe.Core.Projects;
using TeachServe.Server.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Fits;

/// <summary>A stored fit: its id and its document (a <see cref="FitView"/> as JSON, with appliedAt once applied).</summary>
public sealed record FitDocument(string FitId, string Json);

/// <summary>What can be done with learner-model fits: fit, read, plot calibration, apply. Problems are returned, not thrown.</summary>
public sealed class FitOperations(TeachServeDb db, ModelVersionCache versions, TimeProvider time)
{
    /// <summary>Inline fits are bounded so that one request cannot hold a worker thread for long.</summary>
    public const int MaxSessions = 5_000;
    public static readonly TimeSpan MaxDuration = TimeSpan.FromSeconds(60);

    public async Task<Outcome<FitDocument>> CreateAsync(string projectId, CreateFitRequest body, CancellationToken ct)
    {
        if (!(body.Confidence is >= 0.5 and <= 0.999)) return Problems.Unprocessable("'confidence' must be in [0.5, 0.999].");
        if (body.CalibrationBins is < 2 or > 50) return Problems.Unprocessable("'calibrationBins' must be 2 to 50.");
        if (body.ModelVersion is < 1) return Problems.Unprocessable("'modelVersion' must be 1 or more.");
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        var number = await ProjectScope.ReadyVersionAsync(db, projectId, body.ModelVersion, ct);
        if (number.Problem is { } notReady) return notReady;
        var version = await versions.GetAsync(projectId, number.Value, ct);
        var sessions = await FitSessions.LoadAsync(db, projectId, number.Value, MaxSessions, ct);
        if (sessions.Problem is { } tooMany) return tooMany;
        if (sessions.Value!.Count == 0)
            return Problems.Unprocessable($"Model version {number.Value} has no finished session with answers to fit.");

        using var limit = CancellationTokenSource.CreateLinkedTokenSource(ct);
        limit.CancelAfter(MaxDuration);
        FitResult fit;
        try
        {
            fit = await Task.Run(() => LearnerFit.Fit(version.Model, sessions.Value, new FitOptions { Confidence = body.Confidence }, limit.Token), limit.Token);
        }
        catch (OperationCanceledException) when (!ct.IsCancellationRequested)
        {
            return Problems.Unprocessable($"The fit did not finish within {MaxDuration.TotalSeconds:0} s; fit fewer sessions (an older model version) instead.");
        }
        var calibration = Calibration.Compute(version.Model, sessions.Value, new CalibrationOptions { Bins = body.CalibrationBins, Confidence = body.Confidence });

        var record = new LearnerFitRecord
        {
            Id = Ids.New("fit_"),
            ProjectId = projectId, ModelVersion = number.Value, ResultJson = "", CreatedAt = time.GetUtcNow(),
        };
        record.ResultJson = JsonSerializer.Serialize(new FitView(record.Id, projectId, number.Value, fit, calibration, record.CreatedAt, null), Json.Results);
        db.Set<LearnerFitRecord>().Add(record);
        await db.SaveChangesAsync(ct);
        return new FitDocument(record.Id, record.ResultJson);
    }

    public async Task<Outcome<FitDocument>> GetAsync(string fitId, ClaimsPrincipal user, CancellationToken ct) =>
        await FindAsync(user, fitId, tracked: false, ct) is { } fit ? Document(fit) : NoSuchFit();

    /// <summary>The reliability diagram, as <c>calibration.svg</c> or <c>calibration.png</c>.</summary>
    public async Task<Outcome<PlotFile>> CalibrationPlotAsync(string fitId, string file, ClaimsPrincipal user, CancellationToken ct)
    {
        if (!PlotImages.TryParse(file, out var name, out var format) || name != "calibration")
            return Problems.NotFound("No such plot; expected calibration.svg or calibration.png.");
        var fit = await FindAsync(user, fitId, tracked: false, ct);
        if (fit is null) return NoSuchFit();
        var view = JsonSerializer.Deserialize<StoredCalibration>(fit.ResultJson, Json.StoredResults)!;
        return new PlotFile(FitPlots.Calibration(Calibration.ReliabilityPlot(view.Calibration), view.Calibration.BrierScore), format);
    }

    /// <summary>Writes the fitted alpha and lapse into the project's learner settings.</summary>
    public async Task<Outcome<FitDocument>> ApplyAsync(string fitId, ClaimsPrincipal user, CancellationToken ct)
    {
        var fit = await FindAsync(user, fitId, tracked: true, ct);
        if (fit is null) return NoSuchFit();
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
        return Document(fit);
    }

    private sealed record StoredCalibration(CalibrationReport Calibration);

    private static FitDocument Document(LearnerFitRecord fit)
    {
        if (fit.AppliedAt is null) return new FitDocument(fit.Id, fit.ResultJson);
        var node = System.Text.Json.Nodes.JsonNode.Parse(fit.ResultJson)!;
        node["appliedAt"] = fit.AppliedAt.Value;
        return new FitDocument(fit.Id, node.ToJsonString());
    }

    private static ProblemHttpResult NoSuchFit() => Problems.NotFound("No such fit.");

    private Task<LearnerFitRecord?> FindAsync(ClaimsPrincipal user, string fitId, bool tracked, CancellationToken ct) =>
        ProjectScope.FindOwnedAsync(tracked ? db.Set<LearnerFitRecord>() : db.Set<LearnerFitRecord>().AsNoTracking(), user, fitId, "fit_", ct);
}
