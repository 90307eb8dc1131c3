using TeachServe.Core.LiveQuality;

namespace TeachServe.Server.LiveQuality;

/// <summary>
/// Which views said "worse than target" on one live check, by wire name: <c>count-chart</c> (the count CUSUM alarmed
/// or reached the watch share of its limit), <c>candidate-rule</c> (a candidate-rule chart alarmed: the answers follow
/// that rule) and <c>model-view</c> (the model view's predicted answer error is above target). A status change names the
/// causes of the check that made it; a change back to reliable names none.
/// </summary>
public static class LiveCauses
{
    public const string CountChart = "count-chart";
    public const string CandidateRule = "candidate-rule";
    public const string ModelView = "model-view";

    public static IReadOnlyList<string> Of(LiveMonitorSettings settings, LiveStep step, double? modelError)
    {
        var causes = new List<string>(3);
        // After an alarm the chart restarts from zero, so the alarm itself is the count signal.
        if ((step.Alarms & LiveAlarms.Count) != 0 || step.State.Cusum >= settings.WatchFraction * settings.Cusum.Limit)
            causes.Add(CountChart);
        if ((step.Alarms & LiveAlarms.CandidateRule) != 0) causes.Add(CandidateRule);
        if (modelError > settings.TargetAnswerError) causes.Add(ModelView);
        return causes;
    }

    /// <summary>The stored name of the monitors that alarmed (at most 40 characters).</summary>
    public static string AlarmName(LiveAlarms alarms) => alarms switch
    {
        LiveAlarms.Count => "count-cusum",
        LiveAlarms.CandidateRule => "candidate-rule",
        _ when (alarms & LiveAlarms.Count) != 0 && (alarms & LiveAlarms.CandidateRule) != 0 => "count-cusum+candidate-rule",
        _ => "mixture",
    };
}
