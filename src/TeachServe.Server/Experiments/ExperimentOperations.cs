using System.Security.Claims;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Experiments;

/// <summary>What can be done with experiments: define, list, read, start, stop, report. Problems are returned, not thrown.</summary>
public sealed class ExperimentOperations(TeachServeDb db, TimeProvider time)
{
    public async Task<Outcome<ExperimentView>> CreateAsync(string projectId, CreateExperimentRequest body, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        if (body.Name is { Length: > ExperimentLimits.NameLength })
            return Problems.Unprocessable($"'name' must be at most {ExperimentLimits.NameLength} characters.");
        var definition = new ExperimentDefinition
        {
            Name = body.Name,
            Arms = body.Arms,
            Weights = body.Weights,
            PrimaryMetric = body.PrimaryMetric,
            MinimumDetectableEffect = body.MinimumDetectableEffect,
            ControlArm = body.ControlArm,
            Salt = Ids.Base32(System.Security.Cryptography.RandomNumberGenerator.GetBytes(10)),
        };
        var settings = ProjectOperations.Settings(project);
        var problems = ExperimentValidator.Validate(definition, settings.Gate, settings.Labels.Count, settings.Learner.Lapse);
        if (problems.Count > 0) return Problems.Invalid("The experiment is not valid.", Fields(problems));

        var experiment = new Experiment
        {
            Id = Ids.New("exp_"),
            ProjectId = projectId,
            Name = definition.Name,
            DefinitionJson = Json.Serialize(definition),
            Status = ExperimentStatuses.Draft,
            CreatedAt = time.GetUtcNow(),
        };
        db.Set<Experiment>().Add(experiment);
        await db.SaveChangesAsync(ct);
        return View(experiment);
    }

    public async Task<Outcome<ExperimentList>> ListAsync(string projectId, CancellationToken ct)
    {
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        var rows = await db.Set<Experiment>().AsNoTracking().Where(e => e.ProjectId == projectId)
            .OrderBy(e => e.CreatedAt).ThenBy(e => e.Id).ToListAsync(ct);
        return new ExperimentList(rows.Select(View).ToList());
    }

    public async Task<Outcome<ExperimentView>> GetAsync(string experimentId, ClaimsPrincipal user, CancellationToken ct) =>
        await FindAsync(user, experimentId, tracked: false, ct) is { } e ? View(e) : NoSuchExperiment();

    /// <summary>Starts assigning new sessions; starting a running experiment again answers it unchanged.</summary>
    public async Task<Outcome<ExperimentView>> StartAsync(string experimentId, ClaimsPrincipal user, CancellationToken ct)
    {
        var experiment = await FindAsync(user, experimentId, tracked: true, ct);
        if (experiment is null) return NoSuchExperiment();
        if (experiment.Status == ExperimentStatuses.Running) return View(experiment);
        if (experiment.Status == ExperimentStatuses.Stopped)
            return Problems.Conflict("A stopped experiment cannot be restarted (its arms would mix two periods); create a new one.");
        var other = await db.Set<Experiment>().AsNoTracking()
            .Where(e => e.ProjectId == experiment.ProjectId && e.Status == ExperimentStatuses.Running)
            .Select(e => e.Id).FirstOrDefaultAsync(ct);
        if (other is not null)
            return Problems.Conflict($"Experiment {other} is already running in this project; stop it first.",
                new Dictionary<string, object?> { ["runningExperimentId"] = other });
        experiment.Status = ExperimentStatuses.Running;
        experiment.StartedAt = time.GetUtcNow();
        try
        {
            await db.SaveChangesAsync(ct);
        }
        catch (DbUpdateException)
        {
            // A concurrent start of another experiment won (unique running index).
            return Problems.Conflict("Another experiment was started in this project at the same time; stop it first.");
        }
        return View(experiment);
    }

    /// <summary>Stops assigning; stopping a stopped experiment answers it unchanged.</summary>
    public async Task<Outcome<ExperimentView>> StopAsync(string experimentId, ClaimsPrincipal user, CancellationToken ct)
    {
        var experiment = await FindAsync(user, experimentId, tracked: true, ct);
        if (experiment is null) return NoSuchExperiment();
        if (experiment.Status == ExperimentStatuses.Draft) return Problems.Conflict("The experiment has not been started.");
        if (experiment.Status == ExperimentStatuses.Running)
        {
            experiment.Status = ExperimentStatuses.Stopped;
            experiment.StoppedAt = time.GetUtcNow();
            await db.SaveChangesAsync(ct);
        }
        return View(experiment);
    }

    public async Task<Outcome<ExperimentReportResult>> ReportAsync(string experimentId, ClaimsPrincipal user, CancellationToken ct)
    {
        var experiment = await FindAsync(user, experimentId, tracked: false, ct);
        if (experiment is null) return NoSuchExperiment();
        var definition = ExperimentArms.Definition(experiment);
        if (StoredBeforeTheRules(definition) is { } invalid) return invalid;
        return await ComputeAsync(experiment, definition, ct);
    }

    /// <summary>One row per annotator; works for experiments stored before the current rules too.</summary>
    public async Task<Outcome<string>> ReportCsvAsync(string experimentId, ClaimsPrincipal user, CancellationToken ct)
    {
        var experiment = await FindAsync(user, experimentId, tracked: false, ct);
        if (experiment is null) return NoSuchExperiment();
        var outcomes = await ExperimentOutcomes.LoadAsync(db, experiment, ct);
        return ExperimentReportCsv.ToCsv(ExperimentArms.Definition(experiment), outcomes);
    }

    /// <summary>One of <see cref="ExperimentPlots.Names"/> as <c>name.svg</c> or <c>name.png</c>.</summary>
    public async Task<Outcome<PlotFile>> PlotAsync(string experimentId, string file, ClaimsPrincipal user, CancellationToken ct)
    {
        if (!PlotImages.TryParse(file, out var name, out var format) || !ExperimentPlots.Names.Contains(name))
            return Problems.NotFound($"No such plot; expected one of {string.Join(", ", ExperimentPlots.Names.SelectMany(n => new[] { n + ".svg", n + ".png" }))}.");
        var experiment = await FindAsync(user, experimentId, tracked: false, ct);
        if (experiment is null) return NoSuchExperiment();
        var definition = ExperimentArms.Definition(experiment);
        if (StoredBeforeTheRules(definition) is { } invalid) return invalid;
        return new PlotFile(ExperimentPlots.Draw(name, await ComputeAsync(experiment, definition, ct), definition), format);
    }

    private async Task<ExperimentReportResult> ComputeAsync(Experiment experiment, ExperimentDefinition definition, CancellationToken ct)
    {
        var outcomes = await ExperimentOutcomes.LoadAsync(db, experiment, ct);
        // The project's cost settings price the arms' items.
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == experiment.ProjectId, ct);
        var options = project is null ? new ExperimentReportOptions() : new ExperimentReportOptions { Cost = ProjectOperations.Settings(project).Cost };
        return ExperimentReport.Compute(definition, outcomes, options);
    }

    /// <summary>
    /// An experiment stored before the validator's current ranges (e.g. a minimum detectable effect of 1e-300, or
    /// weights summing to infinity) has no meaningful plan or comparison: its report and plots answer 422 naming the
    /// fields, while the CSV export, which needs neither, still works.
    /// </summary>
    private static ProblemHttpResult? StoredBeforeTheRules(ExperimentDefinition definition)
    {
        var problems = ExperimentValidator.Validate(definition);
        return problems.Count == 0 ? null : Problems.Invalid(
            "The experiment was stored before the current rules and cannot be reported; its CSV export still works. Create a new experiment with valid settings.",
            Fields(problems));
    }

    private static IEnumerable<object> Fields(IEnumerable<ExperimentProblem> problems) =>
        problems.Select(p => new { field = p.Field, message = p.Message });

    private static ProblemHttpResult NoSuchExperiment() => Problems.NotFound("No such experiment.");

    private Task<Experiment?> FindAsync(ClaimsPrincipal user, string experimentId, bool tracked, CancellationToken ct) =>
        ProjectScope.FindOwnedAsync(tracked ? db.Set<Experiment>() : db.Set<Experiment>().AsNoTracking(), user, experimentId, "exp_", ct);

    private static ExperimentView View(Experiment e)
    {
        var d = ExperimentArms.Definition(e);
        var control = d.ControlArmIndex();
        return new ExperimentView(e.Id, e.ProjectId, e.Name, e.Status, d.Arms, d.AllocationWeights(), d.PrimaryMetric,
            d.MinimumDetectableEffect, d.Arms[control < 0 ? 0 : control].Name, e.CreatedAt, e.StartedAt, e.StoppedAt);
    }
}
