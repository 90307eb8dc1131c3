namespace TeachServe.Server.LiveQuality;

public static class LiveQualityLimits
{
    public const int OutcomeIdLength = 100;
    public const int MaxBatch = 1000;
    /// <summary>Outcomes listed in one annotator's history, newest kept.</summary>
    public const int HistoryLength = 1000;
    /// <summary>Room for the monitor state's header and up to 64 candidate rules (live.candidateRules allows at most 10).</summary>
    public const int StateBytes = 1024;
    /// <summary>
    /// The count CUSUM's in-control average run length: live checks per false alarm for an annotator exactly at target
    /// (the middle of the 200 / 500 / 1,000 levels studied in docs/live-quality.md).
    /// </summary>
    public const double InControlRunLength = 500;
}
