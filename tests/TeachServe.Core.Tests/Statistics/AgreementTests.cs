using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

public class AgreementTests
{
    [Fact]
    public void Kappa_matches_the_worked_example()
    {
        // 2 raters, 50 items: both yes 20, A yes B no 5, A no B yes 10, both no 15 → κ = 0.40 — standard worked example [pub]
        var kappa = Agreement.CohensKappa(new[,] { { 20, 5 }, { 10, 15 } });
        AssertNear.Decimals(0.40, kappa, 2, "standard worked example [pub]");
        // Second route: for a 2×2 table κ = 2(ad − bc)/((a + b)(b + d) + (a + c)(c + d)).
        AssertNear.Absolute(2.0 * ((20 * 15) - (5 * 10)) / ((25.0 * 20) + (30.0 * 25)), kappa, 1e-15);
    }

    [Fact]
    public void Kappa_on_three_classes_and_edge_cases()
    {
        // Perfect agreement is 1; agreement at chance level is 0 (independent margins: rows ∝ columns product).
        Assert.Equal(1.0, Agreement.CohensKappa(new[,] { { 5, 0, 0 }, { 0, 3, 0 }, { 0, 0, 2 } }), 15);
        AssertNear.Absolute(0.0, Agreement.CohensKappa(new[,] { { 4, 2, 2 }, { 2, 1, 1 }, { 2, 1, 1 } }), 1e-15);
        Assert.True(double.IsNaN(Agreement.CohensKappa(new[,] { { 0, 0 }, { 0, 0 } })), "empty");
        Assert.True(double.IsNaN(Agreement.CohensKappa(new[,] { { 7, 0 }, { 0, 0 } })), "one class only: pe = 1");
        Assert.Throws<ArgumentException>(() => Agreement.CohensKappa(new int[2, 3]));
        Assert.Throws<ArgumentOutOfRangeException>(() => Agreement.CohensKappa(new[,] { { 1, -1 }, { 0, 1 } }));
    }
}
