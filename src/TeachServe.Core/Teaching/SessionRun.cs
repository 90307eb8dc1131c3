using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Statistics;

namespace TeachServe.Core.Teaching;

/// <summary>
/// One annotator's onboarding run as a deterministic state machine (DESIGN 2.5): teaching → testing →
/// released | failed, with retakes returning to teaching. Given the model version, the options and the answers
/// in order, it always reaches the same state, so the server can rebuild any session from its events.
/// Not thread-safe: one session, one caller at a time.
/// </summary>
public sealed class SessionRun
{
    private readonly ModelVersion _model;
    private readonly Belief _belief;
    private readonly TeachingPolicy _policy;
    private readonly SeededRandom _random;
    private readonly BernoulliSprt? _sprt;
    private readonly bool[] _shown;
    private readonly bool[] _testUsed;
    private readonly List<int> _taught = [];
    private readonly List<TestAnswer> _testAnswers = [];
    private readonly Queue<int> _testQueue = new();
    private int _taughtThisAttempt;

    private SessionRun(ModelVersion model, SessionOptions options)
    {
        _model = model;
        Options = options;
        var gate = options.Gate;
        var q = ModelVersion.DisagreementFactor(options.Alpha ?? model.Learner.Alpha);
        _belief = new Belief(model, q, options.Lapse ?? model.Learner.Lapse);
        _policy = new TeachingPolicy(model, options.Policy, options.BlendWeight);
        _random = new SeededRandom(options.Seed);
        _shown = new bool[model.TeachCount];
        _testUsed = new bool[model.TestCount];
        if (gate.Test.Mode == TestModes.Sequential)
        {
            _sprt = new BernoulliSprt(gate.TargetError, Math.Min(0.999, gate.TargetError + gate.Test.Delta), gate.Test.Alpha, gate.Test.Beta);
        }

        Phase = SessionPhase.Teaching;
        if (TeachingComplete())
        {
            BeginTest();
        }
        else
        {
            CurrentItem = _policy.ChooseNext(_belief, _shown, _taught.Count, _random);
        }
    }

    public SessionOptions Options { get; }
    public ModelVersion Model => _model;
    public SessionPhase Phase { get; private set; }

    /// <summary>Answers recorded so far (teaching and test, all attempts).</summary>
    public int Step { get; private set; }

    /// <summary>The item the annotator must answer now (index into <see cref="ModelVersion.ItemIds"/>), -1 once ended.</summary>
    public int CurrentItem { get; private set; } = -1;

    public bool IsEnded => Phase is SessionPhase.Released or SessionPhase.Failed;
    public double PredictedError => _belief.PredictedError();
    public double Confidence => _belief.Confidence(Options.Gate.TargetError);
    public int TaughtCount => _taught.Count;
    public int TestAnswered { get; private set; }
    public int TestErrors { get; private set; }
    public int RetakesUsed { get; private set; }

    /// <summary>Test answers and errors of the current (or last) test attempt.</summary>
    public int AttemptTestAnswered { get; private set; }
    public int AttemptTestErrors { get; private set; }
    public ReadOnlySpan<double> Belief => _belief.Weights;
    public Belief BeliefState => _belief;

    public static SessionRun Start(ModelVersion model, SessionOptions options) => new(model, options);

    public static SessionRun Replay(ModelVersion model, SessionOptions options, IEnumerable<int> answeredLabels)
    {
        var run = new SessionRun(model, options);
        foreach (var label in answeredLabels)
        {
            run.Answer(label);
        }

        return run;
    }

    /// <summary>Records the annotator's label for <see cref="CurrentItem"/> and advances the session.</summary>
    public AnswerOutcome Answer(int label)
    {
        if (IsEnded)
        {
            throw new InvalidOperationException("The session has ended.");
        }

        ArgumentOutOfRangeException.ThrowIfNegative(label);
        ArgumentOutOfRangeException.ThrowIfGreaterThanOrEqual(label, _model.LabelCount);
        var item = CurrentItem;
        var truth = _model.TrueLabel(item);
        var correct = label == truth;
        var before = Phase;
        Step++;
        if (Phase == SessionPhase.Teaching)
        {
            _belief.Teach(item, label);
            _shown[item] = true;
            _taught.Add(item);
            _taughtThisAttempt++;
            if (TeachingComplete())
            {
                BeginTest();
            }
            else
            {
                CurrentItem = _policy.ChooseNext(_belief, _shown, _taught.Count, _random);
            }

            return new AnswerOutcome(true, correct, truth, PredictedError, Phase, Step, Phase != before);
        }

        _belief.Observe(item, label);
        _testAnswers.Add(new TestAnswer(item, label, correct, RetakesUsed));
        TestAnswered++;
        AttemptTestAnswered++;
        if (!correct)
        {
            TestErrors++;
            AttemptTestErrors++;
        }

        var verdict = TestVerdict();
        if (verdict is null)
        {
            CurrentItem = NextTestItem();
        }
        else
        {
            FinishTest(verdict.Value);
        }

        return new AnswerOutcome(false, correct, truth, PredictedError, Phase, Step, Phase != before);
    }

    /// <summary>What the gate needs to release or fail, with its evidence (DESIGN 2.5 point 4).</summary>
    public SessionEvidence Evidence()
    {
        var interval = AttemptTestAnswered > 0 ? ProportionIntervals.Wilson(AttemptTestErrors, AttemptTestAnswered) : new Interval(0, 1);
        return new SessionEvidence(
            Phase,
            Options.Policy,
            [.. _taught],
            [.. _testAnswers],
            AttemptTestAnswered,
            AttemptTestErrors,
            AttemptTestAnswered > 0 ? (double)AttemptTestErrors / AttemptTestAnswered : double.NaN,
            interval,
            PredictedError,
            Confidence,
            RetakesUsed);
    }

    private bool TeachingComplete()
    {
        var gate = Options.Gate;
        if (_taught.Count >= _model.TeachCount || _taughtThisAttempt >= gate.MaxTeachingItems)
        {
            return true;
        }

        // A retake teaches at least one item before the belief may end teaching again.
        if (RetakesUsed > 0 && _taughtThisAttempt == 0)
        {
            return false;
        }

        return _belief.PredictedError() <= gate.TargetError && _belief.Confidence(gate.TargetError) >= gate.Confidence;
    }

    private void BeginTest()
    {
        Phase = SessionPhase.Testing;
        AttemptTestAnswered = 0;
        AttemptTestErrors = 0;
        FillTestQueue();
        CurrentItem = NextTestItem();
        if (CurrentItem < 0)
        {
            FinishTest(false);
        }
    }

    /// <summary>
    /// Class-stratified random order over the test items this session has not answered yet (all of them again
    /// once every one has been used): classes take turns, each class's items shuffled.
    /// </summary>
    private void FillTestQueue()
    {
        _testQueue.Clear();
        if (_testUsed.All(u => u))
        {
            Array.Clear(_testUsed);
        }

        var byClass = Enumerable.Range(0, _model.LabelCount).Select(_ => new List<int>()).ToArray();
        for (var t = 0; t < _testUsed.Length; t++)
        {
            if (!_testUsed[t])
            {
                byClass[_model.TrueLabel(_model.TeachCount + t)].Add(_model.TeachCount + t);
            }
        }

        foreach (var list in byClass)
        {
            _random.Shuffle(System.Runtime.InteropServices.CollectionsMarshal.AsSpan(list));
        }

        var cursors = new int[byClass.Length];
        var order = Enumerable.Range(0, byClass.Length).ToArray();
        var limit = Options.Gate.Test.MaxItems;
        while (_testQueue.Count < limit)
        {
            _random.Shuffle(order.AsSpan());
            var added = false;
            foreach (var c in order)
            {
                if (cursors[c] < byClass[c].Count && _testQueue.Count < limit)
                {
                    _testQueue.Enqueue(byClass[c][cursors[c]++]);
                    added = true;
                }
            }

            if (!added)
            {
                break;
            }
        }
    }

    private int NextTestItem()
    {
        if (_testQueue.Count == 0)
        {
            return -1;
        }

        var item = _testQueue.Dequeue();
        _testUsed[item - _model.TeachCount] = true;
        return item;
    }

    /// <summary>Null while the test goes on; otherwise whether it passed.</summary>
    private bool? TestVerdict()
    {
        var test = Options.Gate.Test;
        var exhausted = _testQueue.Count == 0 || AttemptTestAnswered >= test.MaxItems;
        if (_sprt is not null)
        {
            var decision = _sprt.Decide(AttemptTestErrors, AttemptTestAnswered);
            if (decision == SprtDecision.AcceptNull)
            {
                return true;
            }

            if (decision == SprtDecision.AcceptAlternative)
            {
                return false;
            }
        }

        if (!exhausted)
        {
            return null;
        }

        // Fixed-length rule, and the truncation of the sequential test: pass when the one-sided Wilson upper
        // bound at confidence 1 − alpha lies below the indifference limit target + delta.
        var limit = Options.Gate.TargetError + test.Delta;
        return ProportionIntervals.WilsonUpper(AttemptTestErrors, AttemptTestAnswered, 1.0 - test.Alpha) <= limit;
    }

    private void FinishTest(bool passed)
    {
        var gate = Options.Gate;
        if (passed && gate.RequireBeliefAfterTest)
        {
            passed = _belief.PredictedError() <= gate.TargetError && _belief.Confidence(gate.TargetError) >= gate.Confidence;
        }

        if (passed)
        {
            Phase = SessionPhase.Released;
            CurrentItem = -1;
            return;
        }

        if (RetakesUsed < gate.Retakes && _taught.Count < _model.TeachCount)
        {
            RetakesUsed++;
            _taughtThisAttempt = 0;
            Phase = SessionPhase.Teaching;
            CurrentItem = _policy.ChooseNext(_belief, _shown, _taught.Count, _random);
            return;
        }

        Phase = SessionPhase.Failed;
        CurrentItem = -1;
    }
}

/// <summary>What one answer did.</summary>
/// <param name="WasTeaching">The answer was to a teaching item (feedback may be shown).</param>
/// <param name="PhaseChanged">The session entered another phase with this answer.</param>
public readonly record struct AnswerOutcome(bool WasTeaching, bool Correct, int TrueLabel, double PredictedError, SessionPhase Phase, int Step, bool PhaseChanged);

/// <summary>One held-out test answer.</summary>
public readonly record struct TestAnswer(int Item, int Label, bool Correct, int Attempt);

/// <summary>The record of a session's outcome (DESIGN 2.5 point 4). Test figures are those of the last attempt.</summary>
public sealed record SessionEvidence(
    SessionPhase Phase,
    string Policy,
    IReadOnlyList<int> TaughtItems,
    IReadOnlyList<TestAnswer> TestAnswers,
    int TestAnswered,
    int TestErrors,
    double TestErrorRate,
    Interval TestErrorInterval,
    double PredictedError,
    double Confidence,
    int RetakesUsed);
