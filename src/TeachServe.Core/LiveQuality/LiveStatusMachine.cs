namespace TeachServe.Core.LiveQuality;

/// <summary>What the two views say after one live check (computed by <see cref="LiveMonitor"/>).</summary>
/// <param name="Alarm">A drift monitor (count CUSUM, candidate-rule CUSUM or always-valid test) reached its limit.</param>
/// <param name="Watch">The count CUSUM is at or above its watch line, or the model view predicts answer error above target.</param>
public readonly record struct LiveSignals(bool Alarm, bool Watch);

/// <summary>How a refresher ended.</summary>
public enum RefresherOutcome
{
    Passed,
    Failed,
}

/// <summary>
/// The status rules, a pure function of the current status and one input:
/// <list type="table">
/// <item><term>live check, alarm</term><description>reliable or watch → refresher due; refresher due → paused (drift
/// confirmed a second time without a refresher); paused stays paused.</description></item>
/// <item><term>live check, no alarm, watch signal</term><description>reliable → watch; others unchanged.</description></item>
/// <item><term>live check, no alarm, no watch signal</term><description>watch → reliable; others unchanged.</description></item>
/// <item><term>refresher passed</term><description>any status → reliable (the monitors restart).</description></item>
/// <item><term>refresher failed</term><description>any status → paused.</description></item>
/// </list>
/// Only a passed refresher leaves refresher due or paused: live checks alone never clear an alarm.
/// </summary>
public static class LiveStatusMachine
{
    public static LiveStatus AfterCheck(LiveStatus current, LiveSignals signals) => current switch
    {
        LiveStatus.Paused => LiveStatus.Paused,
        LiveStatus.RefresherDue => signals.Alarm ? LiveStatus.Paused : LiveStatus.RefresherDue,
        _ when signals.Alarm => LiveStatus.RefresherDue,
        _ => signals.Watch ? LiveStatus.Watch : LiveStatus.Reliable,
    };

    public static LiveStatus AfterRefresher(LiveStatus current, RefresherOutcome outcome) =>
        outcome == RefresherOutcome.Passed ? LiveStatus.Reliable : LiveStatus.Paused;
}
