namespace TeachServe.Core.Learning;

/// <summary>
/// Which process produces an annotator's answers, kept beside the hypothesis <see cref="Belief"/> so that the gate
/// does not trust the model for annotators it does not describe. Three sources:
/// <list type="bullet">
/// <item><b>model</b>: the switching learner the <see cref="Belief"/> tracks. Its likelihood of the answers so far is
/// the product of the predictive probabilities Σ_h β(h)·o(a|h,x) that <see cref="Belief.Teach"/> and
/// <see cref="Belief.Observe"/> return, which the caller passes in;</item>
/// <item><b>guessing</b>: every answer uniform over the K labels, likelihood 1/K, never learns;</item>
/// <item><b>unexplained</b>: a rule outside the hypothesis set, seen only through its answer-error rate p: an answer is
/// right with probability 1 − p and each of the K − 1 wrong labels has probability p/(K−1). p lives on a grid of J
/// midpoints p_j = (j + ½)/J·(K−1)/K, j = 0..J−1, with a uniform prior. After each teaching answer, with
/// probability <c>drift</c>, p is redrawn from that prior (the annotator learns in ways the model does not
/// describe); test answers carry no feedback and move nothing.</item>
/// </list>
/// <para>
/// Maths. The posterior over sources is Bayesian model averaging of marginal likelihoods:
/// P(s | a_1..t) ∝ P(s)·P(a_1..t | s), i.e. posterior odds = Bayes factor × prior odds (Kass &amp; Raftery,
/// "Bayes factors", JASA 90, 1995). The unexplained source is a hidden Markov model over the grid; its joint
/// P(a_1..t, p_t = p_j | unexplained) is the forward variable of Rabiner ("A tutorial on hidden Markov models and
/// selected applications in speech recognition", Proc. IEEE 77, 1989, section III-A, the forward procedure):
/// α_t(j) = α_{t−1}(j)·b_j(a_t) at each answer, with b_j = 1 − p_j for a right answer and p_j/(K−1) for a wrong one,
/// then, after a teaching answer only, the transition (1 − d)·I + d·1π^T: α(j) ← (1 − d)·α(j) + d·π_j·Σ_i α(i).
/// All 2 + J states (model, guessing, grid) share one normalised vector, so the source masses are sums of it.
/// Each step is done on logarithms and renormalised (Rabiner's scaling, section V-A, in log form), so sessions of any
/// length neither underflow nor overflow, and a source whose weight has fallen far behind can still recover.
/// </para>
/// <para>
/// Rule error. An annotator's answers are wrong through its rule (error e) or its lapses, p = (1 − lapse)·e +
/// lapse·(K−1)/K (DESIGN 2.2), so a grid state's rule error is e_j = (p_j − lapse·(K−1)/K)/(1 − lapse), clamped to
/// [0, 1]; at lapse 1 every p_j lies below chance and e_j takes its limit, 0. The guessing source's answers are wrong
/// at rate (K−1)/K, which is also its rule error.
/// </para>
/// </summary>
public sealed class AnswerSourceBelief
{
    private const int ModelState = 0;
    private const int GuessState = 1;
    private const int GridStart = 2;

    // Slack for probabilities computed by sums that may round just above 1.
    private const double ProbabilityTolerance = 1e-9;

    private readonly double[] _answerError;
    private readonly double[] _ruleError;
    private readonly double[] _logRight;
    private readonly double[] _logWrong;
    private readonly double _logGuess;
    private readonly double _logKeep;
    private readonly double _logRedraw;
    private readonly double _guessRuleError;

    private readonly double[] _log;
    private readonly double[] _weight;
    private readonly double[] _next;

    public AnswerSourceBelief(int labelCount, double lapse, AnswerSourceOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentOutOfRangeException.ThrowIfLessThan(labelCount, 2, nameof(labelCount));
        if (!(lapse >= 0 && lapse <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(lapse), lapse, "Must lie in [0, 1].");
        }

        options.Validate();
        LabelCount = labelCount;
        Lapse = lapse;
        Options = options;

        var k = labelCount;
        var chance = (k - 1.0) / k;
        var j = options.GridSize;
        _answerError = new double[j];
        _ruleError = new double[j];
        _logRight = new double[j];
        _logWrong = new double[j];
        for (var s = 0; s < j; s++)
        {
            var p = (s + 0.5) / j * chance;
            _answerError[s] = p;
            _ruleError[s] = RuleError(p, k, lapse);
            _logRight[s] = Math.Log(1.0 - p);
            _logWrong[s] = Math.Log(p / (k - 1));
        }

        _logGuess = -Math.Log(k);
        _logKeep = Math.Log(1.0 - options.Drift);
        _logRedraw = Math.Log(options.Drift / j);
        _guessRuleError = chance;

        _log = new double[GridStart + j];
        _weight = new double[GridStart + j];
        _next = new double[GridStart + j];
        var modelPrior = Math.Max(0.0, 1.0 - options.GuessPrior - options.UnexplainedPrior);
        _log[ModelState] = Math.Log(modelPrior);
        _log[GuessState] = Math.Log(options.GuessPrior);
        var logCell = Math.Log(options.UnexplainedPrior / j);
        for (var s = 0; s < j; s++)
        {
            _log[GridStart + s] = logCell;
        }

        _log.CopyTo(_next, 0);
        Renormalise(_next);
    }

    private AnswerSourceBelief(AnswerSourceBelief other)
    {
        LabelCount = other.LabelCount;
        Lapse = other.Lapse;
        Options = other.Options;
        _answerError = other._answerError;
        _ruleError = other._ruleError;
        _logRight = other._logRight;
        _logWrong = other._logWrong;
        _logGuess = other._logGuess;
        _logKeep = other._logKeep;
        _logRedraw = other._logRedraw;
        _guessRuleError = other._guessRuleError;
        _log = (double[])other._log.Clone();
        _weight = (double[])other._weight.Clone();
        _next = new double[other._next.Length];
    }

    public int LabelCount { get; }
    public double Lapse { get; }
    public AnswerSourceOptions Options { get; }

    /// <summary>Posterior probability that the answers come from the switching learner the <see cref="Belief"/> tracks.</summary>
    public double ModelWeight => _weight[ModelState];

    /// <summary>Posterior probability that the annotator answers uniformly at random.</summary>
    public double GuessingWeight => _weight[GuessState];

    /// <summary>Posterior probability of a rule outside the hypothesis set (the sum of <see cref="GridWeights"/>).</summary>
    public double UnexplainedWeight
    {
        get
        {
            var sum = 0.0;
            for (var s = GridStart; s < _weight.Length; s++)
            {
                sum += _weight[s];
            }

            return sum;
        }
    }

    /// <summary>P(unexplained, current answer-error rate = p_j), one entry per grid state; sums to <see cref="UnexplainedWeight"/>.</summary>
    public ReadOnlySpan<double> GridWeights => _weight.AsSpan(GridStart);

    /// <summary>The grid's answer-error rates p_j.</summary>
    public ReadOnlySpan<double> GridAnswerErrors => _answerError;

    /// <summary>The grid's rule errors e_j (see the class remarks).</summary>
    public ReadOnlySpan<double> GridRuleErrors => _ruleError;

    public AnswerSourceBelief Clone() => new(this);

    /// <summary>Overwrites this belief with <paramref name="other"/>'s state, allocating nothing (same settings).</summary>
    internal void CopyFrom(AnswerSourceBelief other)
    {
        if (other.LabelCount != LabelCount || other.Lapse != Lapse || other.Options != Options)
        {
            throw new ArgumentException("Answer-source beliefs with different label counts, lapses or options.", nameof(other));
        }

        other._log.CopyTo(_log, 0);
        other._weight.CopyTo(_weight, 0);
    }

    /// <summary>
    /// The rule error of an answer-error rate: e = (p − lapse·(K−1)/K)/(1 − lapse), clamped to [0, 1], from
    /// p = (1 − lapse)·e + lapse·(K−1)/K; at lapse 1, the limit (0 below chance, 1 above).
    /// </summary>
    public static double RuleError(double answerError, int labelCount, double lapse)
    {
        var chance = (labelCount - 1.0) / labelCount;
        var excess = answerError - (lapse * chance);
        if (lapse >= 1)
        {
            return excess > 0 ? 1.0 : 0.0;
        }

        return Math.Clamp(excess / (1.0 - lapse), 0.0, 1.0);
    }

    /// <summary>A teaching answer: weigh the sources by it, then an unexplained annotator's error rate may drift.</summary>
    /// <param name="modelPredictive">What <see cref="Belief.Teach"/> returned for this answer.</param>
    /// <param name="correct">Whether the answer was the item's true label.</param>
    public void Teach(double modelPredictive, bool correct)
    {
        if (Observe(modelPredictive, correct))
        {
            Drift();
        }
    }

    /// <summary>A test answer (no feedback): weigh the sources by it; nothing moves.</summary>
    /// <param name="modelPredictive">What <see cref="Belief.Observe"/> returned for this answer.</param>
    /// <param name="correct">Whether the answer was the item's true label.</param>
    public void Test(double modelPredictive, bool correct) => Observe(modelPredictive, correct);

    /// <summary>
    /// P(the annotator's rule error ≤ <paramref name="targetRuleError"/>) = ModelWeight·C + Σ_j w_j·1[e_j ≤ target]
    /// + GuessingWeight·1[(K−1)/K ≤ target], with C the model's confidence (<see cref="Belief.Confidence"/>).
    /// </summary>
    public double ProbabilityWithin(double modelConfidence, double targetRuleError)
    {
        CheckProbability(modelConfidence, nameof(modelConfidence));
        if (double.IsNaN(targetRuleError))
        {
            throw new ArgumentOutOfRangeException(nameof(targetRuleError), targetRuleError, "Must be a number.");
        }

        var sum = _weight[ModelState] * modelConfidence;
        if (_guessRuleError <= targetRuleError)
        {
            sum += _weight[GuessState];
        }

        for (var s = 0; s < _ruleError.Length; s++)
        {
            if (_ruleError[s] <= targetRuleError)
            {
                sum += _weight[GridStart + s];
            }
        }

        return sum;
    }

    /// <summary>
    /// The expected rule error: ModelWeight·Ê + GuessingWeight·(K−1)/K + Σ_j w_j·e_j, with Ê the model's predicted
    /// error (<see cref="Belief.PredictedError"/>).
    /// </summary>
    public double PredictedRuleError(double modelPredictedError)
    {
        CheckProbability(modelPredictedError, nameof(modelPredictedError));
        var sum = (_weight[ModelState] * modelPredictedError) + (_weight[GuessState] * _guessRuleError);
        for (var s = 0; s < _ruleError.Length; s++)
        {
            sum += _weight[GridStart + s] * _ruleError[s];
        }

        return sum;
    }

    /// <summary>
    /// Multiplies each state by its likelihood of the answer and renormalises. A model predictive probability of 0 is
    /// log 0 = −∞ for the model alone; if every state ends at −∞ the answer is ignored.
    /// </summary>
    /// <returns>Whether the weights were updated.</returns>
    private bool Observe(double modelPredictive, bool correct)
    {
        CheckProbability(modelPredictive, nameof(modelPredictive));
        _next[ModelState] = _log[ModelState] + Math.Log(modelPredictive);
        _next[GuessState] = _log[GuessState] + _logGuess;
        var likelihood = correct ? _logRight : _logWrong;
        for (var s = 0; s < likelihood.Length; s++)
        {
            _next[GridStart + s] = _log[GridStart + s] + likelihood[s];
        }

        return Renormalise(_next);
    }

    /// <summary>The grid's transition after a teaching answer: α(j) ← (1 − d)·α(j) + d·π_j·Σ_i α(i), in logs.</summary>
    private void Drift()
    {
        var unexplained = LogSumExp(_log.AsSpan(GridStart));
        if (double.IsNegativeInfinity(unexplained))
        {
            return;
        }

        var redraw = _logRedraw + unexplained;
        _log.CopyTo(_next, 0);
        for (var s = GridStart; s < _next.Length; s++)
        {
            _next[s] = LogAddExp(_logKeep + _log[s], redraw);
        }

        // The transition keeps the total; renormalising only stops rounding from accumulating.
        Renormalise(_next);
    }

    /// <summary>Copies <paramref name="candidate"/> into the state, normalised, unless all of it is −∞.</summary>
    private bool Renormalise(double[] candidate)
    {
        var total = LogSumExp(candidate);
        if (double.IsNegativeInfinity(total))
        {
            return false;
        }

        for (var s = 0; s < candidate.Length; s++)
        {
            var v = candidate[s] - total;
            _log[s] = v;
            _weight[s] = Math.Exp(v);
        }

        return true;
    }

    private static double LogSumExp(ReadOnlySpan<double> values)
    {
        var max = double.NegativeInfinity;
        foreach (var v in values)
        {
            max = Math.Max(max, v);
        }

        if (double.IsNegativeInfinity(max))
        {
            return max;
        }

        var sum = 0.0;
        foreach (var v in values)
        {
            sum += Math.Exp(v - max);
        }

        return max + Math.Log(sum);
    }

    private static double LogAddExp(double a, double b)
    {
        var high = Math.Max(a, b);
        var low = Math.Min(a, b);
        return double.IsNegativeInfinity(low) ? high : high + Math.Log(1.0 + Math.Exp(low - high));
    }

    private static void CheckProbability(double value, string name)
    {
        if (!(value >= 0 && value <= 1 + ProbabilityTolerance))
        {
            throw new ArgumentOutOfRangeException(name, value, "Must be a probability in [0, 1].");
        }
    }
}
