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
    private readonly AnswerSourceBelief _sources;

    // Belief mode only: the belief under each learner strength the release must hold for (null in other modes, so
    // sequential and fixed sessions do exactly the work they did before).
    private readonly LearnerStrengthBeliefs? _strengths;
    private readonly TeachingPolicy _policy;
    private readonly TeachingPolicy _representative;
    private readonly SeededRandom _random;
    private readonly bool[] _shown;
    private readonly int[] _testUses;
    private readonly List<int> _taught = [];
    private readonly List<TestAnswer> _testAnswers = [];
    private readonly List<TestAttempt> _attempts = [];
    private readonly Queue<int> _testQueue = new();
    private int _taughtThisAttempt;

    // The figure the annotator is shown must not move with test answers (they would reveal which were wrong): once
    // a test has begun it is frozen, and while a retake may still follow, a copy of the belief that sees teaching
    // answers only is kept for it (a second belief's memory, only for sessions in that state).
    private Belief? _display;
    private double? _frozenDisplay;

    // After the test of an attempt has decided, a random number of further test items is served and recorded but
    // not counted, so that the attempt's end does not point at the answer that decided it.
    private bool? _decided;
    private int _tailLeft;

    // Right teaching answers in a row, whether the belief is satisfied while that streak is still too short, and
    // how many mistakes were made in that state (mistakes the model did not expect).
    private int _streak;
    private bool _remediating;
    private int _surprises;

    private SessionRun(ModelVersion model, SessionOptions options)
    {
        _model = model;
        Options = options;
        var gate = options.Gate;
        var q = ModelVersion.DisagreementFactor(options.Alpha ?? model.Learner.Alpha);
        var lapse = options.Lapse ?? model.Learner.Lapse;
        _belief = options.StartWeights is { } start
            ? Learning.Belief.Continue(model, q, lapse, start as double[] ?? [.. start])
            : new Belief(model, q, lapse);
        _sources = new AnswerSourceBelief(model.LabelCount, _belief.Lapse, new AnswerSourceOptions());
        if (gate.Test.Mode == TestModes.Belief)
        {
            var alpha = options.Alpha ?? model.Learner.Alpha;
            _strengths = new LearnerStrengthBeliefs(model, [.. GateDesign.BeliefStrengthRatios.Select(r => r * alpha)], _belief.Lapse);
        }

        _policy = new TeachingPolicy(model, options.Policy, options.BlendWeight, ItemTypicality.Weights(model, gate.TargetError + (gate.Test.Delta / 2), gate.TypicalityWeight));
        _representative = new TeachingPolicy(model, PolicyNames.Random, options.BlendWeight);
        _random = new SeededRandom(options.Seed);
        _shown = new bool[model.TeachCount];
        _testUses = new int[model.TestCount];
        Design = GateDesign.CreateOrClosest(gate, model.LabelCount, _belief.Lapse);

        Phase = SessionPhase.Teaching;
        if (TeachingComplete())
        {
            BeginTest();
        }
        else
        {
            CurrentItem = ChooseNext();
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

    /// <summary>The test each attempt runs, with its exact error rates.</summary>
    public GateDesign Design { get; }

    /// <summary>Predicted error under the belief, test answers included (for the owner and the gate).</summary>
    public double PredictedError => _belief.PredictedError();

    /// <summary>Predicted error from teaching answers only: what the annotator may be shown.</summary>
    public double DisplayedPredictedError => _display?.PredictedError() ?? _frozenDisplay ?? _belief.PredictedError();
    public double Confidence => _belief.Confidence(Options.Gate.TargetError);
    public int TaughtCount => _taught.Count;
    public int TestAnswered { get; private set; }
    public int TestErrors { get; private set; }
    public int RetakesUsed { get; private set; }

    /// <summary>Test answers and errors of the current (or last) test attempt, the uncounted tail included.</summary>
    public int AttemptTestAnswered { get; private set; }
    public int AttemptTestErrors { get; private set; }

    /// <summary>Test answers and errors of the current attempt that the test counts (before its decision).</summary>
    public int AttemptCountedAnswered { get; private set; }
    public int AttemptCountedErrors { get; private set; }

    /// <summary>Every test attempt so far, the current one last.</summary>
    public IReadOnlyList<TestAttempt> Attempts => _attempts;
    public ReadOnlySpan<double> Belief => _belief.Weights;

    /// <summary>Whether the annotator answers as the model, at random, or by a rule it does not describe.</summary>
    public AnswerSourceBelief Sources => _sources;

    /// <summary>
    /// Teaching stops early for an annotator whose answers are this likely to be at chance (<see cref="ChanceWeight"/>): more items would not
    /// teach them, and the test, which they then take at once, is what decides (they fail it).
    /// </summary>
    public const double GuessingStop = 0.95;

    /// <summary>
    /// Posterior probability that the annotator answers at or near chance: the guessing source plus unexplained
    /// states whose answer error is at least 80 % of chance, (K − 1)/K (common practice: "near chance" has no
    /// published cut; 80 % keeps a learner at half of chance's error out of it).
    /// </summary>
    public double ChanceWeight
    {
        get
        {
            var chance = (_model.LabelCount - 1.0) / _model.LabelCount;
            var weight = _sources.GuessingWeight;
            var grid = _sources.GridWeights;
            var errors = _sources.GridAnswerErrors;
            for (var j = 0; j < grid.Length; j++)
            {
                weight += errors[j] >= 0.8 * chance ? grid[j] : 0.0;
            }

            return weight;
        }
    }

    /// <summary>Teaching answers needed before <see cref="GuessingStop"/> may end teaching.</summary>
    public const int GuessingMinItems = 6;
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
            _sources.Teach(_belief.Teach(item, label), correct);
            _surprises += !correct && _remediating ? 1 : 0;
            _streak = correct ? _streak + 1 : 0;
            _strengths?.Teach(item, label);
            _display?.Teach(item, label);
            _shown[item] = true;
            _taught.Add(item);
            _taughtThisAttempt++;
            if (TeachingComplete())
            {
                BeginTest();
            }
            else
            {
                CurrentItem = ChooseNext();
            }

            return new AnswerOutcome(true, correct, truth, DisplayedPredictedError, Phase, Step, Phase != before);
        }

        var counted = _decided is null;
        if (counted)
        {
            // Tail answers are recorded but tell the belief nothing it may use: they were not part of the test.
            _sources.Test(_belief.Observe(item, label), correct);
            _strengths?.Observe(item, label);
        }

        _testAnswers.Add(new TestAnswer(item, label, correct, RetakesUsed, counted));
        TestAnswered++;
        AttemptTestAnswered++;
        TestErrors += correct ? 0 : 1;
        AttemptTestErrors += correct ? 0 : 1;
        if (counted)
        {
            AttemptCountedAnswered++;
            AttemptCountedErrors += correct ? 0 : 1;
            _decided = TestVerdict();
            if (_decided is not null)
            {
                _tailLeft = Design.Test.IsFixedLength ? 0 : _random.NextInt(Options.Gate.Test.TailItems + 1);
            }
        }
        else
        {
            _tailLeft--;
        }

        RecordAttempt(null);
        if (_decided is { } verdict && (_tailLeft <= 0 || _testQueue.Count == 0))
        {
            FinishTest(verdict);
        }
        else
        {
            CurrentItem = NextTestItem();
        }

        return new AnswerOutcome(false, correct, truth, DisplayedPredictedError, Phase, Step, Phase != before);
    }

    /// <summary>What the gate needs to release or fail, with its evidence (DESIGN 2.5 point 4).</summary>
    public SessionEvidence Evidence()
    {
        var interval = TestAnswered > 0 ? ProportionIntervals.Wilson(TestErrors, TestAnswered) : new Interval(0, 1);
        return new SessionEvidence(
            Phase,
            Options.Policy,
            [.. _taught],
            [.. _testAnswers],
            TestAnswered,
            TestErrors,
            TestAnswered > 0 ? (double)TestErrors / TestAnswered : double.NaN,
            interval,
            PredictedError,
            Confidence,
            RetakesUsed,
            [.. _attempts]);
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

        if (_taughtThisAttempt >= GuessingMinItems && ChanceWeight >= GuessingStop)
        {
            return true;
        }

        var satisfied = _belief.PredictedError() <= gate.TargetError && _belief.Confidence(gate.TargetError) >= gate.Confidence;

        // The belief describes annotators as the model does; a run of right answers is what the annotator shows.
        // While the belief is satisfied and the streak is not, the session is in remediation (ChooseNext); every
        // mistake made there is evidence that the model misreads this annotator, and lengthens the streak needed.
        var extension = Math.Min(_surprises * gate.MasteryExtension, 3 * gate.MasteryExtension);
        _remediating = satisfied && _streak < gate.MasteryStreak + extension;
        return satisfied && !_remediating;
    }

    /// <summary>
    /// The next teaching item: the policy's choice, except in remediation with representative items, where it is
    /// drawn uniformly from the unshown teach items (they follow the pool's own spread of cases, which learners who
    /// do not think like the model need; random teaching does as well as any policy for them in simulation).
    /// </summary>
    private int ChooseNext() =>
        _remediating && Options.Gate.Remediation == RemediationModes.Representative
            ? _representative.ChooseNext(_belief, _shown, _taught.Count, _random)
            : _policy.ChooseNext(_belief, _shown, _taught.Count, _random,
                _taught.Count < Options.Gate.OpeningVariety ? Options.OpeningTolerance : 0);

    private void BeginTest()
    {
        Phase = SessionPhase.Testing;
        if (RetakesUsed < Options.Gate.Retakes)
        {
            _display ??= _belief.Clone();
        }
        else
        {
            _frozenDisplay ??= _display?.PredictedError() ?? _belief.PredictedError();
            _display = null;
        }
        AttemptTestAnswered = 0;
        AttemptTestErrors = 0;
        AttemptCountedAnswered = 0;
        AttemptCountedErrors = 0;
        _decided = null;
        _tailLeft = 0;
        FillTestQueue();
        RecordAttempt(null);
        CurrentItem = NextTestItem();
        if (CurrentItem < 0)
        {
            FinishTest(false);
        }
    }

    /// <summary>
    /// The items of one attempt: a simple random sample of the test items this session has used least (fresh items
    /// first; a retake reuses items only when the pool is smaller than all attempts need, and never repeats one
    /// within an attempt), enough for the whole test and its longest tail, served in one fully shuffled order.
    /// Nothing about the order depends on labels, so neighbouring items tell the annotator nothing.
    /// With <see cref="SessionOptions.TestAdministration"/>, each item drawn (in the sample's order) is given with its
    /// probability K and otherwise passed over (Sympson &amp; Hetter 1985); should too few be given for the attempt's
    /// length, passed-over items fill it in the order they were drawn, since a shorter test would not keep its rates.
    /// </summary>
    private void FillTestQueue()
    {
        _testQueue.Clear();
        var count = _model.TestCount;
        var keys = new (int Uses, double Tie, int Item)[count];
        for (var t = 0; t < count; t++)
        {
            keys[t] = (_testUses[t], _random.NextDouble(), _model.TeachCount + t);
        }

        Array.Sort(keys);
        var take = Math.Min(count, Design.Test.MaxItems + (Design.Test.IsFixedLength ? 0 : Options.Gate.Test.TailItems));
        int[] sample;
        if (Options.TestAdministration is { } administration)
        {
            if (administration.Count != count)
            {
                throw new ArgumentException($"TestAdministration has {administration.Count} probabilities for {count} test items.", nameof(Options));
            }

            var given = new List<int>(take);
            var passed = new List<int>();
            for (var i = 0; i < count && given.Count < take; i++)
            {
                var item = keys[i].Item;
                var k = administration[item - _model.TeachCount];
                // K ≥ 1 draws no number, so probabilities of 1 leave the session exactly as without them.
                if (k >= 1 || _random.NextDouble() < k)
                {
                    given.Add(item);
                }
                else
                {
                    passed.Add(item);
                }
            }

            given.AddRange(passed.Take(take - given.Count));
            sample = [.. given];
        }
        else
        {
            sample = keys.Take(take).Select(k => k.Item).ToArray();
        }

        _random.Shuffle(sample.AsSpan());
        foreach (var item in sample)
        {
            _testQueue.Enqueue(item);
        }
    }

    private int NextTestItem()
    {
        if (_testQueue.Count == 0)
        {
            return -1;
        }

        var item = _testQueue.Dequeue();
        _testUses[item - _model.TeachCount]++;
        return item;
    }

    /// <summary>
    /// Belief mode: the posterior probability that the annotator's rule error exceeds target + delta, taken at the
    /// conservative end — the lowest confidence over the learner strengths of <see cref="GateDesign.BeliefStrengthRatios"/>,
    /// and the mass of the guessing and unexplained sources counted as exceeding. NaN in the other modes.
    /// </summary>
    /// <remarks>
    /// The other sources never vouch for an annotator here: for them the test answers are the only evidence of their
    /// error rate, and the exact test already weighs those with its stated rates. So the belief releases early only an
    /// annotator whose answers the switching learner explains, on the strength of what teaching showed of them.
    /// </remarks>
    public double ReleaseRisk => _strengths is null
        ? double.NaN
        : 1.0 - (_sources.ModelWeight * _strengths.LowestConfidence(Options.Gate.TargetError + Options.Gate.Test.Delta));

    /// <summary>Null while the test goes on; otherwise whether it passed.</summary>
    private bool? TestVerdict()
    {
        var decision = Design.Test.Decide(AttemptCountedErrors, Math.Min(AttemptCountedAnswered, Design.Test.MaxItems));
        if (_strengths is not null && decision == SprtDecision.Continue
            && AttemptCountedAnswered >= Options.Gate.Test.MinItems
            && ReleaseRisk <= Design.BeliefRisk)
        {
            // Belief mode: release once the posterior risk of a rule error beyond target + delta is within the design's
            // bound (GateDesign.BeliefRisk); the exact test stays the model-free guard: its failure boundary still
            // fails, and its truncation still decides.
            return true;
        }

        if (decision != SprtDecision.Continue)
        {
            return decision == SprtDecision.AcceptNull;
        }

        // A test pool smaller than the test (a version compiled before pools were checked) cannot reach the
        // test's last step: without the evidence the design needs, the attempt does not pass.
        return _testQueue.Count == 0 ? false : null;
    }

    private void RecordAttempt(bool? passed)
    {
        var attempt = new TestAttempt(RetakesUsed, AttemptTestAnswered, AttemptTestErrors, AttemptCountedAnswered, AttemptCountedErrors, passed);
        if (_attempts.Count > RetakesUsed)
        {
            _attempts[RetakesUsed] = attempt;
        }
        else
        {
            _attempts.Add(attempt);
        }
    }

    private void FinishTest(bool passed)
    {
        var gate = Options.Gate;
        if (passed && gate.RequireBeliefAfterTest)
        {
            passed = _belief.PredictedError() <= gate.TargetError && _belief.Confidence(gate.TargetError) >= gate.Confidence;
        }

        RecordAttempt(passed);
        _decided = null;
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
            CurrentItem = ChooseNext();
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
/// <param name="Attempt">0 for the first test, 1 for the first retake's, and so on.</param>
/// <param name="Counted">False for an answer of the tail served after the attempt's test had decided.</param>
public readonly record struct TestAnswer(int Item, int Label, bool Correct, int Attempt, bool Counted = true);

/// <summary>One test attempt: every answer, the answers the test counted, and its verdict once given.</summary>
/// <param name="Passed">True or false once the attempt has ended; null while it runs.</param>
public readonly record struct TestAttempt(int Attempt, int Answered, int Errors, int CountedAnswered, int CountedErrors, bool? Passed);

/// <summary>
/// The record of a session's outcome (DESIGN 2.5 point 4). Test counts and the interval cover every attempt;
/// <see cref="Attempts"/> gives each attempt's own.
/// </summary>
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
    int RetakesUsed,
    IReadOnlyList<TestAttempt> Attempts);
