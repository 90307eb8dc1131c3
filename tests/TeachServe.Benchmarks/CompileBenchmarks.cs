using BenchmarkDotNet.Attributes;
using TeachServe.Core.Model;

namespace TeachServe.Benchmarks;

/// <summary>
/// Wall time of <see cref="ModelCompiler.FromPredictions"/>: dedupe, mistake bits, errors, prior and the
/// precomputed stochastic-greedy, cover and easy-first orders. The prediction vectors are generated beforehand.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 1, iterationCount: 3, invocationCount: 1)]
public class CompileBenchmarks
{
    private int[] _truth = [];
    private string[] _ids = [];
    private List<(byte[] Predictions, double Weight)> _hypotheses = [];
    private int _teach;

    [Params(BenchCases.Small, BenchCases.Large)]
    public string Case { get; set; } = BenchCases.Small;

    [GlobalSetup]
    public void Setup()
    {
        (_truth, _ids, _hypotheses) = SyntheticModels.Predictions(Case);
        _teach = BenchCases.Size(Case).Teach;
    }

    [Benchmark(Description = "compile")]
    public ModelVersion Compile() => SyntheticModels.Compile(_truth, _ids, _teach, _hypotheses);
}
