namespace TeachServe.Server.Simulations;

/// <summary>Bounds on simulations submitted over the API (<c>TeachServe:Simulations</c>), so one request cannot occupy the server for hours.</summary>
public sealed class SimulationLimits
{
    public const string Section = "TeachServe:Simulations";

    /// <summary>Simulated learners per policy and variant.</summary>
    public int MaxLearners { get; set; } = 2_000;
    /// <summary>learners × policies × variants of one job.</summary>
    public int MaxLearnerRuns { get; set; } = 20_000;
    /// <summary>Jobs computing at once on this node; the rest wait in the queue.</summary>
    public int MaxConcurrentJobs { get; set; } = 1;
    /// <summary>Jobs queued or running per project; more are refused with 429.</summary>
    public int MaxPendingJobsPerProject { get; set; } = 4;
    /// <summary>A job still running after this long is stopped and ends <c>failed</c>.</summary>
    public TimeSpan MaxRunTime { get; set; } = TimeSpan.FromMinutes(10);
    /// <summary>How often a node confirms the jobs it holds, picks up cancels made through other nodes, and fails orphans.</summary>
    public TimeSpan HeartbeatInterval { get; set; } = TimeSpan.FromSeconds(15);
    /// <summary>A queued or running job whose node has not confirmed it for this long is failed (its node stopped).</summary>
    public TimeSpan StaleAfter { get; set; } = TimeSpan.FromMinutes(1);
}
