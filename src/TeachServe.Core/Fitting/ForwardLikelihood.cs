using TeachServe.Core.Model;

namespace TeachServe.Core.Fitting;

/// <summary>
/// The log-likelihood of recorded answers under the switching-learner hidden Markov model (DESIGN 2.2–2.3) by the
/// forward algorithm: log P(a_1..a_T) = Σ_t log Σ_h β_{t−1}(h)·o(a_t|h,x_t), the normalisers of the belief filter's
/// observe steps, with β moved after every teaching step. The sessions are checked and packed once; each
/// evaluation then runs O(|H|) per step over bitsets with no allocation. Not thread-safe (it owns its scratch).
/// </summary>
internal sealed class ForwardLikelihood
{
    // Below this the running product of observe normalisers is folded into the log, so that it never underflows.
    private const double FoldBelow = 1e-280;

    private readonly int _m;
    private readonly int _words;
    private readonly int _labels;
    private readonly ulong[] _agree;     // per (item, label): bit h set when h(item) = label
    private readonly ulong[] _mistakes;  // per item: bit h set when h(item) ≠ y(item)
    private readonly double[] _prior;
    private readonly int[] _stepItem;
    private readonly int[] _stepLabel;
    private readonly bool[] _stepTeaching;
    private readonly int[] _sessionStart; // session s owns steps [_sessionStart[s], _sessionStart[s+1])
    private readonly double[] _belief;
    private readonly double[] _learner;

    public ForwardLikelihood(ModelVersion model, IReadOnlyList<RecordedSession> sessions)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(sessions);
        if (sessions.Count == 0)
        {
            throw new ArgumentException("At least one recorded session is needed to fit the learner model.", nameof(sessions));
        }

        _m = model.HypothesisCount;
        _words = model.WordsPerRow;
        _labels = model.LabelCount;
        _prior = model.Prior.ToArray();
        var priorTotal = _prior.Sum();
        for (var h = 0; h < _m; h++)
        {
            _prior[h] /= priorTotal;
        }

        _mistakes = model.MistakeBits.ToArray();
        _agree = new ulong[model.ItemCount * _labels * _words];
        for (var item = 0; item < model.ItemCount; item++)
        {
            for (var h = 0; h < _m; h++)
            {
                var label = model.Predict(h, item);
                _agree[(((item * _labels) + label) * _words) + (h >> 6)] |= 1UL << (h & 63);
            }
        }

        var total = 0;
        for (var s = 0; s < sessions.Count; s++)
        {
            var session = sessions[s] ?? throw new ArgumentException($"Session {s} is null.", nameof(sessions));
            total += (session.Steps ?? throw new ArgumentException($"Session {s} has no step list.", nameof(sessions))).Count;
        }

        if (total == 0)
        {
            throw new ArgumentException("The recorded sessions contain no answers to fit the learner model to.", nameof(sessions));
        }

        _stepItem = new int[total];
        _stepLabel = new int[total];
        _stepTeaching = new bool[total];
        _sessionStart = new int[sessions.Count + 1];
        var index = 0;
        for (var s = 0; s < sessions.Count; s++)
        {
            _sessionStart[s] = index;
            var steps = sessions[s].Steps;
            for (var t = 0; t < steps.Count; t++)
            {
                var step = steps[t];
                if ((uint)step.Item >= (uint)model.ItemCount)
                {
                    throw new ArgumentException($"Session {s}, step {t}: item {step.Item} is not in the model version ({model.ItemCount} items).", nameof(sessions));
                }

                if ((uint)step.Label >= (uint)_labels)
                {
                    throw new ArgumentException($"Session {s}, step {t}: label {step.Label} is not one of the {_labels} labels.", nameof(sessions));
                }

                if (step.Teaching && !model.IsTeachItem(step.Item))
                {
                    throw new ArgumentException($"Session {s}, step {t}: item {step.Item} is a test item but is recorded as a teaching step.", nameof(sessions));
                }

                _stepItem[index] = step.Item;
                _stepLabel[index] = step.Label;
                _stepTeaching[index] = step.Teaching;
                index++;
            }
        }

        _sessionStart[sessions.Count] = index;
        _belief = new double[_m];
        _learner = new double[_m];
        SessionCount = sessions.Count;
        AnswerCount = total;
    }

    public int SessionCount { get; }
    public int AnswerCount { get; }

    /// <summary>Likelihood evaluations so far.</summary>
    public int Evaluations { get; private set; }

    /// <summary>The log-likelihood of all sessions; −∞ when some answer is impossible (only with lapse 0).</summary>
    public double LogLikelihood(double alpha, double lapse, CancellationToken cancellationToken = default)
    {
        cancellationToken.ThrowIfCancellationRequested();
        Evaluations++;
        var q = ModelVersion.DisagreementFactor(alpha);
        var sum = 0.0;
        for (var s = 0; s < SessionCount; s++)
        {
            sum += SessionLogLikelihood(s, q, lapse);
            if (double.IsNegativeInfinity(sum))
            {
                return sum;
            }
        }

        return sum;
    }

    private double SessionLogLikelihood(int session, double q, double lapse)
    {
        var belief = _belief.AsSpan();
        var learner = _learner.AsSpan();
        _prior.CopyTo(belief);
        _prior.CopyTo(learner);
        var m = _m;
        var words = _words;
        var agree = 1.0 - lapse + (lapse / _labels);
        var disagree = lapse / _labels;
        var mass = 1.0; // Σ_h β(h), 1 up to rounding

        var logSum = 0.0;
        var product = 1.0;
        for (var t = _sessionStart[session]; t < _sessionStart[session + 1]; t++)
        {
            var item = _stepItem[t];
            var agreeRow = _agree.AsSpan(((item * _labels) + _stepLabel[t]) * words, words);

            // Observe: the normaliser Σ_h β(h)·o(a|h,x) is this step's factor of the likelihood.
            var agreeMass = 0.0;
            for (var h = 0; h < m; h++)
            {
                if ((agreeRow[h >> 6] & (1UL << (h & 63))) != 0)
                {
                    agreeMass += belief[h];
                }
            }

            var total = (disagree * mass) + ((agree - disagree) * agreeMass);
            if (!(total > 0))
            {
                return double.NegativeInfinity;
            }

            product *= total;
            if (product < FoldBelow)
            {
                logSum += Math.Log(product);
                product = 1.0;
            }

            var agreeFactor = agree / total;
            var disagreeFactor = disagree / total;
            if (!_stepTeaching[t])
            {
                for (var h = 0; h < m; h++)
                {
                    belief[h] *= (agreeRow[h >> 6] & (1UL << (h & 63))) != 0 ? agreeFactor : disagreeFactor;
                }

                mass = 1.0;
                continue;
            }

            // Move (DESIGN 2.3 step 2), fused with the observe update: β(h)·ℓ(h,x) + J·P(h|A_t), J = (1−q)·Σ_{wrong} β'(h).
            var mistakeRow = _mistakes.AsSpan(item * words, words);
            var wrongMass = 0.0;
            var newLearnerMass = 0.0;
            for (var h = 0; h < m; h++)
            {
                var v = belief[h] * ((agreeRow[h >> 6] & (1UL << (h & 63))) != 0 ? agreeFactor : disagreeFactor);
                if ((mistakeRow[h >> 6] & (1UL << (h & 63))) != 0)
                {
                    wrongMass += v;
                    v *= q;
                    learner[h] *= q;
                }

                belief[h] = v;
                newLearnerMass += learner[h];
            }

            // Rescale Q(h|A) to sum 1 in the same pass (it would underflow after many mistakes at large alpha).
            var inverse = 1.0 / newLearnerMass;
            var jump = (1.0 - q) * wrongMass;
            mass = 0.0;
            for (var h = 0; h < m; h++)
            {
                var p = learner[h] * inverse;
                learner[h] = p;
                var v = belief[h] + (jump * p);
                belief[h] = v;
                mass += v;
            }
        }

        return logSum + Math.Log(product);
    }
}
