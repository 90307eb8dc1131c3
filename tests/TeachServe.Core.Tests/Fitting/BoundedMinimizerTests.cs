using TeachServe.Core.Fitting;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Fitting;

public class BoundedMinimizerTests
{
    [Theory]
    [InlineData(0.3, 0.0, 1.0)]
    [InlineData(-2.5, -10.0, 3.0)]
    [InlineData(7.0, 6.9, 7.3)]
    public void Finds_the_vertex_of_a_parabola(double vertex, double lower, double upper)
    {
        var evaluations = 0;
        var r = BoundedMinimizer.Minimize(x => { evaluations++; return ((x - vertex) * (x - vertex)) + 1; }, lower, upper, 1e-8, 200);
        // Closed form [derived]; parabolic steps make it exact after a few evaluations (Brent 1973, ch. 5).
        AssertNear.Absolute(vertex, r.X, 1e-7);
        AssertNear.Absolute(1.0, r.Value, 1e-13);
        Assert.True(r.Converged);
        Assert.InRange(evaluations, 1, 30);
    }

    [Fact]
    public void A_minimum_at_an_end_is_returned_exactly()
    {
        // f increasing on [0, 1]: minimum at 0 exactly [derived].
        var r = BoundedMinimizer.Minimize(x => Math.Exp(x) - x / 2, 0.0, 1.0, 1e-6, 200);
        Assert.Equal(0.0, r.X);
        var top = BoundedMinimizer.Minimize(x => -x, -1.0, 2.0, 1e-6, 200);
        Assert.Equal(2.0, top.X);
    }

    [Fact]
    public void Non_smooth_functions_still_converge_by_golden_section()
    {
        // |x − 1/3| + 2: minimum at 1/3 [derived].
        var r = BoundedMinimizer.Minimize(x => Math.Abs(x - (1.0 / 3)) + 2, -4.0, 4.0, 1e-9, 500);
        AssertNear.Absolute(1.0 / 3, r.X, 1e-8);
        Assert.True(r.Converged);
    }

    [Fact]
    public void The_iteration_limit_is_honoured()
    {
        var evaluations = 0;
        var r = BoundedMinimizer.Minimize(x => { evaluations++; return Math.Abs(x - 0.123456789); }, 0.0, 1.0, 1e-15, 5);
        Assert.False(r.Converged);
        Assert.InRange(evaluations, 1, 5 + 3);
    }
}
