using TeachServe.Core.Experiments;
using TeachServe.Core.Statistics;

namespace TeachServe.Core.Tests.Experiments;

public class ArmAssignmentTests
{
    // Golden values from an independent implementation (Python hashlib: sha256((salt + '\n' + ref).encode('utf-8')),
    // first 8 bytes big-endian, top 53 bits / 2^53). They pin the hash input, the byte order and the scaling, so
    // a node on another runtime or a later version assigns every worker as this one does.
    [Theory]
    [InlineData("exp-7f3a", "worker-42", 0.6289488144423158)] // digest starts a102ca1ce3418844
    [InlineData("exp-7f3a", "w-é", 0.719625745434001)]        // UTF-8, not UTF-16: digest starts b8396491ffa7ef66
    [InlineData("", "x", 0.7339695385135737)]                 // digest starts bbe56d7c2d0f1f72
    public void Unit_value_matches_an_independent_sha256(string salt, string workerRef, double expected)
    {
        Assert.Equal(expected, ArmAssignment.UnitValue(salt, workerRef));
    }

    [Theory]
    [InlineData(new[] { 1.0, 1.0 }, 1)]            // u = 0.6289 ≥ 0.5
    [InlineData(new[] { 2.0, 1.0, 1.0 }, 1)]       // shares end at 0.5, 0.75, 1
    [InlineData(new[] { 1.0, 1.0, 2.0 }, 2)]       // shares end at 0.25, 0.5, 1
    [InlineData(new[] { 0.7, 0.3 }, 0)]            // 0.6289 < 0.7
    [InlineData(new[] { 5.0 }, 0)]
    public void Bucket_follows_the_cumulative_weight_shares(double[] weights, int expected)
    {
        Assert.Equal(expected, ArmAssignment.Assign("exp-7f3a", "worker-42", weights));
    }

    [Fact]
    public void The_same_worker_always_gets_the_same_arm()
    {
        double[] weights = [1, 2, 3];
        var first = WorkerRefs(1_000, seed: 3).Select(w => ArmAssignment.Assign("s", w, weights)).ToArray();
        var again = WorkerRefs(1_000, seed: 3).Select(w => ArmAssignment.Assign("s", w, weights)).ToArray();
        Assert.Equal(first, again);
        Assert.Equal(3, first.Distinct().Count());
    }

    [Theory]
    [InlineData(new[] { 0.5, 0.3, 0.2 })]
    [InlineData(new[] { 1.0, 1.0, 1.0, 1.0 })]
    [InlineData(new[] { 9.0, 1.0 })]
    public void Shares_over_100k_workers_match_the_weights(double[] weights)
    {
        var counts = Counts(WorkerRefs(100_000, seed: 11).Select(w => ArmAssignment.Assign("exp-7f3a", w, weights)), weights.Length);
        var fit = SampleRatio.ChiSquare(counts, weights);
        Assert.True(fit.PValue > 0.001, $"χ² = {fit.Statistic}, p = {fit.PValue}, counts {string.Join(", ", counts)}");

        // The same check has the power to fail: against weights off by two percentage points it rejects.
        var skewed = weights.Select((w, i) => (w / weights.Sum()) + (i == 0 ? 0.02 : -0.02 / (weights.Length - 1))).ToArray();
        Assert.True(SampleRatio.ChiSquare(counts, skewed).PValue < 0.001);
    }

    [Theory]
    [InlineData(new[] { 1.0, 1.0 })]
    [InlineData(new[] { 0.5, 0.3, 0.2 })]
    public void Different_salts_assign_independently(double[] weights)
    {
        // Under independence the joint share of (arm i under salt A, arm j under salt B) is w_i·w_j.
        var k = weights.Length;
        var joint = new long[k * k];
        var planned = new double[k * k];
        for (var i = 0; i < k; i++)
        {
            for (var j = 0; j < k; j++)
                planned[(i * k) + j] = weights[i] * weights[j];
        }

        var agree = 0;
        foreach (var w in WorkerRefs(100_000, seed: 5))
        {
            int a = ArmAssignment.Assign("experiment-a", w, weights), b = ArmAssignment.Assign("experiment-b", w, weights);
            joint[(a * k) + b]++;
            agree += a == b ? 1 : 0;
        }

        var fit = SampleRatio.ChiSquare(joint, planned);
        Assert.True(fit.PValue > 0.001, $"χ² = {fit.Statistic}, p = {fit.PValue}");
        Assert.True(agree < 100_000 * 0.9, "the salts must not reproduce the same assignment");
    }

    [Fact]
    public void Invalid_weights_are_rejected()
    {
        Assert.Throws<ArgumentException>(() => ArmAssignment.Assign("s", "w", []));
        Assert.Throws<ArgumentException>(() => ArmAssignment.Assign("s", "w", [1, 0]));
        Assert.Throws<ArgumentException>(() => ArmAssignment.Assign("s", "w", [1, -1]));
        Assert.Throws<ArgumentException>(() => ArmAssignment.Assign("s", "w", [1, double.NaN]));
        Assert.Throws<ArgumentException>(() => ArmAssignment.Assign("s", "w", [1, double.PositiveInfinity]));
        Assert.Throws<ArgumentNullException>(() => ArmAssignment.Assign("s", null!, [1]));
    }

    private static IEnumerable<string> WorkerRefs(int count, ulong seed)
    {
        var random = new SeededRandom(seed);
        for (var i = 0; i < count; i++)
            yield return $"worker-{random.NextUInt64():x16}";
    }

    private static long[] Counts(IEnumerable<int> arms, int k)
    {
        var counts = new long[k];
        foreach (var arm in arms)
            counts[arm]++;
        return counts;
    }
}
