using BenchmarkDotNet.Attributes;
using TeachServe.Core.Hypotheses;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;

namespace TeachServe.Benchmarks;

/// <summary>
/// Wall time of <see cref="ModelCompiler.Compile(ProjectDefinition, CancellationToken)"/> on the synthetic projects
/// (<see cref="SyntheticProjects"/>): feature standardisation, fits, hypothesis generation, dedupe, mistake matrix
/// and the precomputed orders.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 1, iterationCount: 3, invocationCount: 1)]
public class ProjectCompileBenchmarks
{
    private ProjectDefinition _project = null!;

    [Params(ProjectCases.Small, ProjectCases.Wine, ProjectCases.Digits, ProjectCases.Large)]
    public string Case { get; set; } = ProjectCases.Small;

    [GlobalSetup]
    public void Setup() => _project = SyntheticProjects.Of(Case);

    [Benchmark(Description = "project compile")]
    public ModelVersion Compile() => ModelCompiler.Compile(_project);
}

/// <summary>
/// The same compiles with the linear family and fit as they were before the compile-speed work
/// (<see cref="ReferenceLinearFamily"/>), the same-run baseline. Only the two small shapes: the reference takes
/// minutes on 1,797 × 64 × 10 (QuickCheck <c>--profile</c> with <c>reference</c> times it once).
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 1, iterationCount: 3, invocationCount: 1)]
public class ReferenceProjectCompileBenchmarks
{
    private ProjectDefinition _project = null!;

    [Params(ProjectCases.Small, ProjectCases.Wine)]
    public string Case { get; set; } = ProjectCases.Small;

    [GlobalSetup]
    public void Setup() => _project = SyntheticProjects.Of(Case);

    [Benchmark(Description = "project compile, reference")]
    public ModelVersion Compile() =>
        ModelCompiler.Compile(_project, new CompileProgressReporter(null), (input, pool, _) => ReferenceLinearFamily.Generate(input, pool), CancellationToken.None);
}
