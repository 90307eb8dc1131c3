namespace TeachServe.Core.LiveQuality;

/// <summary>A released annotator's standing on live work (see <see cref="LiveStatusMachine"/> for the rules).</summary>
public enum LiveStatus
{
    /// <summary>Live checks and the model agree the annotator labels within target.</summary>
    Reliable,
    /// <summary>Evidence leans towards drift (the chart is past its watch line, or the model predicts error above target); no alarm yet.</summary>
    Watch,
    /// <summary>A drift monitor alarmed: a refresher should be started.</summary>
    RefresherDue,
    /// <summary>A refresher failed, or drift was confirmed again while a refresher was still owed: keep them off live work.</summary>
    Paused,
}
