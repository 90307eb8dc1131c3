using System.ComponentModel;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.LiveQuality;
using TeachServe.Core.Projects;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Versions;

namespace TeachServe.Server.LiveQuality;

/// <summary>The owner's request to fit the project's forgetting rate from its annotators' live records.</summary>
public sealed record ForgettingFitRequest
{
    /// <summary>Also store the fitted rate as the project's <c>live.forgettingPerCheck</c>.</summary>
    [Description("Also store the fitted rate as the project's live.forgettingPerCheck (each annotator's model view is rebuilt with it at their next batch).")]
    public bool Apply { get; init; }
    [Description("Confidence of the profile-likelihood interval, 0.5 to 0.999 (default 0.95).")]
    public double Confidence { get; init; } = 0.95;
}

/// <summary>
/// The fitted per-check forgetting rate with its profile-likelihood interval, from the live checks of the annotators
/// released on one model version (the newest with monitored annotators), each from their release belief up to their
/// first refresher (which teaches, and is not forgetting).
/// </summary>
public sealed record ForgettingFitView(
    double PerCheck, double Low, double High, double Confidence, int Checks, int Annotators, int ModelVersion,
    double PreviousPerCheck, bool Applied);

/// <summary>
/// Fits <see cref="LiveSettings.ForgettingPerCheck"/> with <see cref="ForgettingFit"/> (maximum likelihood of the model
/// view's predictive probabilities, Brent's method on [0, 0.5], Wilks interval). Problems are returned, not thrown.
/// </summary>
public sealed class ForgettingFitOperations(TeachServeDb db, TimeProvider time, ModelVersionCache versions, LiveMonitors monitors, Refreshers refreshers)
{
    /// <summary>
    /// Fewest live checks on the model's items for a fit: with fewer, the interval spans most of [0, 0.5] and the rate
    /// says nothing (from memory: a few hundred answers pin a rate of order 0.01 to within a factor of about two).
    /// </summary>
    public const int MinChecks = 100;

    public async Task<Outcome<ForgettingFitView>> FitAsync(string projectId, ForgettingFitRequest request, CancellationToken ct)
    {
        if (!(request.Confidence >= 0.5 && request.Confidence <= 0.999))
            return Problems.BadRequest($"'confidence' must lie in [0.5, 0.999], not {request.Confidence}.");
        var project = await db.Projects.FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        var rows = await db.LiveMonitors.AsNoTracking().Where(m => m.ProjectId == projectId).ToListAsync(ct);
        if (rows.Count == 0)
            return Problems.Unprocessable($"No annotator of the project has live checks yet; a fit needs at least {MinChecks} live checks on the model's items.");
        var number = rows.Max(m => m.ModelVersion);
        var live = monitors.ModelOf(await versions.GetAsync(projectId, number, ct));
        var lapse = live.Version.Settings.Learner.Lapse;

        var records = new List<LiveRecord>();
        foreach (var row in rows.Where(m => m.ModelVersion == number).OrderBy(m => m.WorkerRef, StringComparer.Ordinal))
        {
            var firstRefresher = (await Refreshers.AppliedSinceAsync(db, row, ct)).Select(r => (DateTimeOffset?)r.EndedAt).FirstOrDefault();
            var checks = (await db.LiveChecks.AsNoTracking()
                    .Where(c => c.ProjectId == projectId && c.WorkerRef == row.WorkerRef && c.ReceivedAt >= row.StartedAt)
                    .OrderBy(c => c.AnsweredAt).ThenBy(c => c.Id).ToListAsync(ct))
                .Where(c => firstRefresher is null || c.AnsweredAt < firstRefresher)
                .Select(live.Check).ToList();
            if (checks.Count == 0) continue;
            var release = await refreshers.EndBeliefAsync(live.Version, row.SessionId, ct);
            records.Add(new LiveRecord(release.Weights, checks));
        }
        var usable = records.Sum(r => r.Checks.Count(c => c.Item is not null));
        if (usable < MinChecks)
            return Problems.Unprocessable(
                $"Too few live checks to fit a forgetting rate: {usable} on the items of model version {number}, and a fit needs at least {MinChecks} " +
                "(gold items carried inline are outside the model and do not count).");

        var fit = ForgettingFit.Fit(live.Version.Model, lapse, records, LiveSettings.MaxForgettingPerCheck, request.Confidence);
        var settings = ProjectOperations.Settings(project);
        var previous = settings.Live.ForgettingPerCheck;
        if (request.Apply)
        {
            project.SettingsJson = Json.Serialize(settings with { Live = settings.Live with { ForgettingPerCheck = fit.PerCheck } });
            project.UpdatedAt = time.GetUtcNow();
            await db.SaveChangesAsync(ct);
        }
        return new ForgettingFitView(fit.PerCheck, fit.Low, fit.High, request.Confidence, usable, records.Count, number, previous, request.Apply);
    }
}
