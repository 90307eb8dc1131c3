namespace TeachServe.Core.Experiments;

/// <summary>Planning settings of <see cref="ExperimentReport.Compute(ExperimentDefinition, IReadOnlyList{AnnotatorOutcome}, ExperimentReportOptions)"/>.</summary>
public sealed record ExperimentReportOptions
{
    /// <summary>Power the sample planner aims for, in (0, 1).</summary>
    public double PlannedPower { get; init; } = 0.8;

    /// <summary>Two-sided level the sample planner and the current power use, in (0, 1).</summary>
    public double PlanningAlpha { get; init; } = 0.05;

    /// <summary>The project's costs, for <see cref="ArmSummary.CostPerRelease"/>.</summary>
    public Projects.CostSettings Cost { get; init; } = new();
}
