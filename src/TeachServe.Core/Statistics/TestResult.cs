namespace TeachServe.Core.Statistics;

/// <summary>The outcome of a significance test.</summary>
/// <param name="Statistic">The test statistic (z, t or χ², as the method says).</param>
/// <param name="DegreesOfFreedom">Degrees of freedom of the reference distribution; <c>NaN</c> where none applies (z tests).</param>
/// <param name="PValue">The p-value, in [0, 1]; <c>NaN</c> when the test is undefined for the data (the method says when).</param>
public readonly record struct TestResult(double Statistic, double DegreesOfFreedom, double PValue);
