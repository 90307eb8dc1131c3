namespace TeachServe.Core.Statistics;

/// <summary>What a sequential probability ratio test says after the observations so far.</summary>
public enum SprtDecision
{
    /// <summary>The likelihood ratio is still between the bounds: observe more.</summary>
    Continue,

    /// <summary>The log-likelihood ratio reached the lower bound: accept H0 (error rate ≤ p0).</summary>
    AcceptNull,

    /// <summary>The log-likelihood ratio reached the upper bound: accept H1 (error rate ≥ p1).</summary>
    AcceptAlternative,
}
