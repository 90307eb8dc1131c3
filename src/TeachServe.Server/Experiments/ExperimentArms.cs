using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Experiments;

/// <summary>Assigns a starting session to an arm of the project's running experiment, if there is one.</summary>
public static class ExperimentArms
{
    public static async Task<AssignedArm?> AssignAsync(Sessions.Store.SessionReads reads, TeachServeDb db, string projectId, string workerRef, CancellationToken ct)
    {
        var running = await reads.RunningExperimentAsync(db, projectId, ct);
        if (running is null) return null;
        var definition = Definition(running);
        var index = ArmAssignment.Assign(definition.Salt, workerRef, definition.AllocationWeights());
        return new AssignedArm(running.Id, index, definition.Arms[index].Name, definition.Arms[index]);
    }

    public static ExperimentDefinition Definition(Experiment experiment) =>
        Json.Deserialize<ExperimentDefinition>(experiment.DefinitionJson);
}
