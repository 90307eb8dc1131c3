using TeachServe.Core.Projects;
using TeachServe.Core.Statistics;

namespace TeachServe.Core.Teaching;

/// <summary>
/// The held-out test a gate runs, worked out from its settings: the target and the indifference limit mapped from
/// rule error to answer error (lapses counted), the false-release rate spent over all attempts, and the exact
/// truncated sequential test of one attempt (<see cref="TruncatedSequentialTest"/>).
/// </summary>
/// <remarks>
/// An annotator whose rule errs on a share e of items, and who answers at random (K labels) with probability
/// <c>lapse</c>, gives a wrong answer with probability <c>(1 − lapse)·e + lapse·(K − 1)/K</c>: the test observes
/// answers, while the target is stated on rules (DESIGN 2.2). Each attempt may release a bad annotator, so the
/// false-release rate beta is split evenly over the first attempt and every retake (the Bonferroni bound:
/// P(some attempt releases) ≤ Σ beta/(r + 1) = beta, whatever the annotator learns between attempts). Failing a
/// good annotator needs every attempt to fail, so each attempt keeps the whole alpha.
/// </remarks>
public sealed class GateDesign
{
    private GateDesign(GateSettings gate, int labelCount, double lapse, TruncatedSequentialTest test, TestShortfall? shortfall)
    {
        Gate = gate;
        LabelCount = labelCount;
        Lapse = lapse;
        Test = test;
        Shortfall = shortfall;
    }

    /// <summary>Null when the test meets the settings; otherwise what it reaches instead (<see cref="CreateOrClosest"/>).</summary>
    public TestShortfall? Shortfall { get; }

    public GateSettings Gate { get; }
    public int LabelCount { get; }
    public double Lapse { get; }

    /// <summary>The test of one attempt (every attempt runs the same test, on fresh items where the pool allows).</summary>
    public TruncatedSequentialTest Test { get; }

    /// <summary>Attempts in all: the first and every retake.</summary>
    public int Attempts => Gate.Retakes + 1;

    /// <summary>The false-release rate each attempt may spend.</summary>
    public double AttemptBeta => Gate.Test.Beta / Attempts;

    /// <summary>
    /// Belief mode: learner strengths the release must hold under, as multiples of the assumed alpha — the assumed
    /// learner and one learning at half its strength (the simulator's slow learner; a forgetful learner, whose
    /// posterior slides back toward the prior, also keeps bad rules longer than the assumed one and is covered in
    /// simulation by the same half strength). See <see cref="Learning.LearnerStrengthBeliefs"/>.
    /// </summary>
    public static IReadOnlyList<double> BeliefStrengthRatios { get; } = [1.0, 0.5];

    /// <summary>
    /// Belief mode: share of the attempt's beta that the posterior risk may reach, see <see cref="BeliefRisk"/>.
    /// </summary>
    public const double BeliefRiskShare = 0.2;

    /// <summary>
    /// Belief mode: the belief releases once the posterior probability that the annotator's rule error exceeds
    /// target + delta (the model source's complement counted as exceeding, the lowest confidence over
    /// <see cref="BeliefStrengthRatios"/>) is at most this: <see cref="AttemptBeta"/> × <see cref="BeliefRiskShare"/>.
    /// </summary>
    /// <remarks>
    /// A rule that releases only while P(bad | answers) ≤ τ gives P(bad ∩ released) = E[P(bad | answers)·1[released]]
    /// ≤ τ·P(released), hence P(bad | released) ≤ τ and P(released | bad) ≤ τ·P(released)/P(bad) (the tower property;
    /// the posterior-risk form of a Bayes test; Berger 1985, section 4.3.3, from memory). The first bound is the share of releases
    /// that are bad; the second is the false-release rate, and it is at most the attempt's beta whenever at least
    /// τ/AttemptBeta = 20 % of the annotators who reach the test are bad. When fewer are, the bound is weaker, but the
    /// released annotators' posterior risk is then mostly far below τ; the share 0.2 was chosen by seeded simulation
    /// over the three seed projects and the assumed, slow, forgetful, stuck and random-answering learners, which the
    /// test suite repeats on one project (SessionRun belief-mode simulation test).
    /// </remarks>
    public double BeliefRisk => AttemptBeta * BeliefRiskShare;

    /// <summary>Probability of a wrong answer from an annotator whose rule errs with probability <paramref name="ruleError"/>.</summary>
    public static double AnswerError(double ruleError, double lapse, int labelCount) =>
        ((1 - lapse) * ruleError) + (lapse * (labelCount - 1) / labelCount);

    public static GateDesign Create(GateSettings gate, int labelCount, double lapse) =>
        TryCreate(gate, labelCount, lapse, out var design, out var shortfall) ? design : throw new ArgumentException(shortfall!.ToString(), nameof(gate));

    /// <summary>The design, or why none meets the settings (with the closest achievable rates).</summary>
    public static bool TryCreate(GateSettings gate, int labelCount, double lapse, out GateDesign design, out TestShortfall? shortfall)
    {
        ArgumentNullException.ThrowIfNull(gate);
        ArgumentOutOfRangeException.ThrowIfLessThan(labelCount, 2);
        if (!(lapse >= 0 && lapse < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(lapse), lapse, "A gate needs a lapse rate in [0, 1): with lapse 1 answers say nothing.");
        }

        var p0 = AnswerError(gate.TargetError, lapse, labelCount);
        var limit = gate.TargetError + gate.Test.Delta;
        var p1 = AnswerError(limit < 1 ? limit : 0.999, lapse, labelCount);
        if (!(p1 > p0))
        {
            // Settings so close to an error of 1 that no answer count can separate them: the validator's delta rule
            // refuses them before a gate is built; report the closest thing, a test that never releases.
            p1 = Math.Min(1 - 1e-9, p0 + 1e-9);
        }
        var fixedLength = gate.Test.Mode == TestModes.Fixed;
        if (TruncatedSequentialTest.TryDesign(p0, p1, gate.Test.Alpha, gate.Test.Beta / (gate.Retakes + 1), gate.Test.MaxItems, out var test, out shortfall, fixedLength))
        {
            design = new GateDesign(gate, labelCount, lapse, test, null);
            return true;
        }

        design = new GateDesign(gate, labelCount, lapse, TruncatedSequentialTest.Closest(shortfall), shortfall);
        return false;
    }

    /// <summary>
    /// The design, or for settings no test of their length can meet (refused when a project is validated, but a
    /// session may run on an older version) the closest fixed-length test, with <see cref="Shortfall"/> saying so.
    /// </summary>
    public static GateDesign CreateOrClosest(GateSettings gate, int labelCount, double lapse)
    {
        TryCreate(gate, labelCount, lapse, out var design, out _);
        return design;
    }

    /// <summary>
    /// The operating characteristic at the given rule error rates: per attempt, and over all attempts for an
    /// annotator whose error stays the same between attempts (an upper bound on one who learns in between).
    /// </summary>
    public IReadOnlyList<OperatingPoint> OperatingCharacteristic(IEnumerable<double> ruleErrors) =>
        [.. ruleErrors.Select(e =>
        {
            var (release, items) = Test.Evaluate(AnswerError(e, Lapse, LabelCount));
            var overall = 1 - Math.Pow(1 - release, Attempts);
            // Expected test items over attempts: attempt k + 1 runs only when the first k failed.
            var expected = 0.0;
            for (var k = 0; k < Attempts; k++)
            {
                expected += Math.Pow(1 - release, k) * items;
            }

            return new OperatingPoint(e, release, items, overall, expected);
        })];

    /// <summary>The rule error rates the summaries show: 0, the target's halves and multiples, and the limit.</summary>
    public IReadOnlyList<double> StandardErrorRates()
    {
        var target = Gate.TargetError;
        var limit = Math.Min(0.999, target + Gate.Test.Delta);
        double[] rates = [0.0, target / 2, target, (target + limit) / 2, limit, Math.Min(0.999, limit + Gate.Test.Delta), (LabelCount - 1.0) / LabelCount];
        return [.. rates.Where(r => r < 1).Distinct().Order()];
    }
}

/// <summary>One point of a gate's operating characteristic (DESIGN 1).</summary>
/// <param name="RuleError">The annotator's rule error (lapses come on top).</param>
/// <param name="AttemptRelease">Probability that one attempt releases.</param>
/// <param name="AttemptItems">Expected test items of one attempt.</param>
/// <param name="Release">Probability that some attempt releases, the error staying the same between attempts.</param>
/// <param name="Items">Expected test items over all attempts, likewise.</param>
public readonly record struct OperatingPoint(double RuleError, double AttemptRelease, double AttemptItems, double Release, double Items);
