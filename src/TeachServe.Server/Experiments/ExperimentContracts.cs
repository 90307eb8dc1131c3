using TeachServe.Core.Experiments;

namespace TeachServe.Server.Experiments;

/// <summary>The body of <c>POST /projects/{id}/experiments</c>; the server chooses the assignment salt.</summary>
public sealed record CreateExperimentRequest
{
    public required string Name { get; init; }
    public required IReadOnlyList<ArmDefinition> Arms { get; init; }
    public IReadOnlyList<double>? Weights { get; init; }
    public string PrimaryMetric { get; init; } = ExperimentMetrics.TestError;
    public double MinimumDetectableEffect { get; init; } = 0.1;
    public string? ControlArm { get; init; }
}

public sealed record ExperimentView(
    string ExperimentId,
    string ProjectId,
    string Name,
    string Status,
    IReadOnlyList<ArmDefinition> Arms,
    IReadOnlyList<double> Weights,
    string PrimaryMetric,
    double MinimumDetectableEffect,
    string ControlArm,
    DateTimeOffset CreatedAt,
    DateTimeOffset? StartedAt,
    DateTimeOffset? StoppedAt);

public sealed record ExperimentList(IReadOnlyList<ExperimentView> Experiments);

/// <summary>The arm a session was assigned to, as stored on the session row.</summary>
public sealed record AssignedArm(string ExperimentId, int Index, string Name, ArmDefinition Definition);
