using BenchmarkDotNet.Attributes;
using TeachServe.Core.Model;
using TeachServe.Core.Teaching;

namespace TeachServe.Benchmarks;

/// <summary>
/// Memory per session: bytes allocated by <see cref="SessionRun.Start"/> (belief, learner posterior, policy
/// scratch, shown flags, first choice), all of which the session keeps. The step itself allocates nothing.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 1, iterationCount: 5)]
public class SessionMemoryBenchmarks
{
    private ModelVersion _model = null!;

    [Params(BenchCases.Small, BenchCases.Large)]
    public string Case { get; set; } = BenchCases.Small;

    [GlobalSetup]
    public void Setup() => _model = SyntheticModels.Build(Case);

    [Benchmark(Description = "session start")]
    public SessionRun Start() => SessionRun.Start(_model, new SessionOptions { Seed = 3 });
}
