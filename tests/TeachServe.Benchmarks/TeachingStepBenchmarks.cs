using BenchmarkDotNet.Attributes;
using TeachServe.Core;
using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Benchmarks;

/// <summary>
/// The per-answer cost of an adaptive session (choose the next item with blend 1, then one belief update)
/// against the floor: the four masked sums over every unshown mistake row and nothing else.
/// Every answer starts from the same ten-step state; restoring it is an O(|H|) copy, under 1 % of a step.
/// </summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 3, iterationCount: 10)]
public class TeachingStepBenchmarks
{
    private ModelVersion _model = null!;
    private SessionState _state = null!;
    private Belief _work = null!;
    private TeachingPolicy _policy = null!;
    private SeededRandom _random = null!;
    private int[] _unshown = [];
    private float[] _a = [], _b = [], _c = [], _d = [];
    private double[] _sums = [];

    [Params(BenchCases.Small, BenchCases.Large)]
    public string Case { get; set; } = BenchCases.Small;

    [GlobalSetup]
    public void Setup()
    {
        _model = SyntheticModels.Build(Case);
        _state = new SessionState(_model);
        _work = _state.Belief.Clone();
        _policy = new TeachingPolicy(_model, PolicyNames.Adaptive, SessionState.Blend);
        _random = new SeededRandom(11);
        _unshown = Enumerable.Range(0, _model.TeachCount).Where(x => !_state.Shown[x]).ToArray();

        // The floor's four weight vectors, prepared once from the same state the policy would prepare them from.
        var padded = MistakeKernel.PaddedLength(_model.HypothesisCount);
        _a = new float[padded];
        _b = new float[padded];
        _c = new float[padded];
        _d = new float[padded];
        var beta = _state.Belief.Weights;
        var learner = _state.Belief.LearnerWeights;
        var total = learner.ToArray().Sum();
        for (var h = 0; h < _model.HypothesisCount; h++)
        {
            _a[h] = (float)beta[h];
            _b[h] = (float)(beta[h] * _model.Error[h]);
            _c[h] = (float)(learner[h] / total);
            _d[h] = (float)(learner[h] / total * _model.Error[h]);
        }

        _sums = new double[_unshown.Length * 4];
    }

    [Benchmark(Description = "per-answer")]
    public int PerAnswer()
    {
        _work.CopyFrom(_state.Belief);
        var item = _policy.ChooseNext(_work, _state.Shown, SessionState.Taught, _random);
        _work.Teach(item, _model.TrueLabel(item));
        return item;
    }

    [Benchmark(Description = "floor")]
    public double Floor()
    {
        // Every unshown row in one call, as the policy calls the kernel.
        MistakeKernel.RowSums4(_model.MistakeBits, _model.WordsPerRow, _unshown, _a, _b, _c, _d, _sums);
        return _sums[0] + _sums[(4 * _unshown.Length) - 1];
    }

    /// <summary>The floor computed one row at a time (weights reread per row): shows what cache blocking buys.</summary>
    [Benchmark(Description = "floor, row by row")]
    public double FloorRowByRow()
    {
        var total = 0.0;
        foreach (var x in _unshown)
        {
            MistakeKernel.RowSums4(_model.MistakeRow(x), _a, _b, _c, _d, out var s0, out _, out _, out var s3);
            total += s0 + s3;
        }

        return total;
    }
}

/// <summary>The same step by <see cref="ReferenceTeacher"/>: plain loops, doubles, one prediction at a time.</summary>
[MemoryDiagnoser]
[SimpleJob(launchCount: 1, warmupCount: 1, iterationCount: 5, invocationCount: 1)]
public class ReferenceStepBenchmarks
{
    private ModelVersion _model = null!;
    private SessionState _state = null!;
    private double[] _belief = [], _learner = [], _beliefStart = [], _learnerStart = [];

    [Params(BenchCases.Small, BenchCases.Large)]
    public string Case { get; set; } = BenchCases.Small;

    [GlobalSetup]
    public void Setup()
    {
        _model = SyntheticModels.Build(Case);
        _state = new SessionState(_model);
        _beliefStart = _state.Belief.Weights.ToArray();
        _learnerStart = _state.Belief.LearnerWeights.ToArray();
        _belief = (double[])_beliefStart.Clone();
        _learner = (double[])_learnerStart.Clone();
    }

    [Benchmark(Description = "reference")]
    public int Reference()
    {
        _beliefStart.CopyTo(_belief, 0);
        _learnerStart.CopyTo(_learner, 0);
        var item = ReferenceTeacher.ChooseAdaptive(_model, _belief, _learner, _model.Q, SessionState.Blend, _state.Shown);
        ReferenceTeacher.Teach(_model, _belief, _learner, _model.Q, _model.Learner.Lapse, item, _model.TrueLabel(item));
        return item;
    }
}
