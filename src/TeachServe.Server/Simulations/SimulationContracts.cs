using TeachServe.Core.Simulation;

namespace TeachServe.Server.Simulations;

/// <summary>The body of <c>POST /projects/{id}/simulations</c>: a comparison like the CLI's <c>simulate</c>.</summary>
public sealed record CreateSimulationRequest
{
    public required IReadOnlyList<string> Policies { get; init; }
    /// <summary>Learner variants (kebab-case, e.g. <c>assumed</c>, <c>slow</c>, <c>biased-prior</c>); default <c>assumed</c>.</summary>
    public IReadOnlyList<string>? Variants { get; init; }
    public int Learners { get; init; } = 200;
    public ulong Seed { get; init; } = 1;
    /// <summary>null = the newest ready model version.</summary>
    public int? ModelVersion { get; init; }
}

public sealed record SimulationView(
    string SimulationId,
    string ProjectId,
    int ModelVersion,
    string Status,
    double PercentDone,
    string? Reason,
    CreateSimulationRequest Request,
    IReadOnlyList<SimulationResult>? Results,
    DateTimeOffset CreatedAt,
    DateTimeOffset? StartedAt,
    DateTimeOffset? FinishedAt);
