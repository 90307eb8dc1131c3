namespace TeachServe.Core.LiveQuality;

/// <summary>Settings of the after-release simulation (<see cref="LiveQualityStudy"/>).</summary>
public sealed record LiveQualityStudyOptions
{
    /// <summary>Simulated annotators per scenario (the same annotators, by seed, in every scenario).</summary>
    public int Annotators { get; init; } = 1000;

    public ulong Seed { get; init; } = 1;

    /// <summary>Live checks before the behaviour changes.</summary>
    public int ChangeAt { get; init; } = 200;

    /// <summary>Live checks of each stable annotator (the in-control ARL is in-control checks per false alarm over all of them).</summary>
    public int InControlHorizon { get; init; } = 4000;

    /// <summary>Checks followed after the change point.</summary>
    public int AfterChangeHorizon { get; init; } = 3000;

    /// <summary>In-control average run lengths at which the monitors are compared.</summary>
    public IReadOnlyList<double> RunLengths { get; init; } = [200, 500, 1000];

    /// <summary>The fixed-window rule's window (common practice: "below 80 % on the last 20 live checks").</summary>
    public int Window { get; init; } = 20;

    /// <summary>Candidate rules watched by the candidate-rule CUSUMs.</summary>
    public int Candidates { get; init; } = 10;

    /// <summary>The drift alternatives of the item-aware CUSUM (one chart each).</summary>
    public IReadOnlyList<DriftAlternative> ItemAwareAlternatives { get; init; } = ItemAwareCusum.DefaultAlternatives;

    /// <summary>The item-aware CUSUM's limits swept: this many nats apart ...</summary>
    public double ItemAwareStep { get; init; } = 0.25;

    /// <summary>... and this many of them.</summary>
    public int ItemAwareLevels { get; init; } = 64;

    /// <summary>Per-check forgetting probabilities of the forgetting scenarios.</summary>
    public IReadOnlyList<double> ForgettingRates { get; init; } = [0.005, 0.02, 0.05];

    /// <summary>Rule errors a shortcut may have: drawn by prior mass among rules with error in (target, this].</summary>
    public double MaxShortcutError { get; init; } = 0.45;

    /// <summary>Level of the always-valid mixture test.</summary>
    public double MixtureAlpha { get; init; } = 0.01;

    /// <summary>Runs per drift scenario that get a refresher at their first alarm (the belief is replayed for each).</summary>
    public int RefresherRuns { get; init; } = 100;

    /// <summary>The forgetting rate the model view assumes when the refresher starts.</summary>
    public double AssumedForgetting { get; init; } = 0.01;

    /// <summary>The ARL0 of the deployed monitors whose first alarm starts the refresher.</summary>
    public double DeployedRunLength { get; init; } = 500;

    /// <summary>Design the count CUSUM's weights at the answer error the model predicts at release instead of the target's.</summary>
    public bool ReferenceAtRelease { get; init; } = true;

    /// <summary>Threads (the machine's cores are shared; 2 by default).</summary>
    public int Threads { get; init; } = 2;

    internal void Validate()
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(Annotators, 10, nameof(Annotators));
        ArgumentOutOfRangeException.ThrowIfLessThan(ChangeAt, Window, nameof(ChangeAt));
        ArgumentOutOfRangeException.ThrowIfLessThan(InControlHorizon, 100, nameof(InControlHorizon));
        ArgumentOutOfRangeException.ThrowIfLessThan(AfterChangeHorizon, 10, nameof(AfterChangeHorizon));
        ArgumentOutOfRangeException.ThrowIfLessThan(Window, 1, nameof(Window));
        ArgumentOutOfRangeException.ThrowIfGreaterThan(Window, 64, nameof(Window));
        ArgumentOutOfRangeException.ThrowIfNegative(Candidates, nameof(Candidates));
        ArgumentOutOfRangeException.ThrowIfNegative(RefresherRuns, nameof(RefresherRuns));
        ArgumentOutOfRangeException.ThrowIfLessThan(Threads, 1, nameof(Threads));
        ArgumentOutOfRangeException.ThrowIfLessThan(ItemAwareLevels, 2, nameof(ItemAwareLevels));
        if (!(ItemAwareStep > 0 && ItemAwareStep < 10))
        {
            throw new ArgumentOutOfRangeException(nameof(ItemAwareStep), ItemAwareStep, "Must lie in (0, 10).");
        }
        if (RunLengths.Count == 0 || RunLengths.Any(r => !(r > 1) || r * 2 > InControlHorizon))
        {
            throw new ArgumentOutOfRangeException(nameof(RunLengths), "Each run length must exceed 1 and be at most half the in-control horizon.");
        }

        if (ForgettingRates.Any(r => !(r > 0 && r < 1)))
        {
            throw new ArgumentOutOfRangeException(nameof(ForgettingRates), "Each rate must lie in (0, 1).");
        }

        if (!(MixtureAlpha > 0 && MixtureAlpha < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(MixtureAlpha), MixtureAlpha, "Must lie in (0, 1).");
        }
    }
}
