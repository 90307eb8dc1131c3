using System.Collections.Concurrent;
using TeachServe.Core.LiveQuality;
using TeachServe.Server.Versions;

namespace TeachServe.Server.LiveQuality;

/// <summary>
/// The drift monitor of each ready model version, designed once per node: the count CUSUM of
/// <see cref="LiveMonitorSettings.Create"/> from the version's gate target, the drift error target + test delta (capped
/// at the error of answering at random), its lapse and labels, at an exact in-control run length of
/// <see cref="LiveQualityLimits.InControlRunLength"/>. Candidate-rule charts and the always-valid test stay off, and the
/// model view's watch signal is not used yet, so the status follows the count CUSUM alone.
/// </summary>
public sealed class LiveMonitors
{
    private readonly ConcurrentDictionary<(string, int), LiveMonitor> _monitors = new();

    public LiveMonitor For(CompiledVersion version) =>
        _monitors.GetOrAdd((version.ProjectId, version.Number), _ => Design(version));

    public static LiveMonitor Design(CompiledVersion version)
    {
        var gate = version.Settings.Gate;
        var labels = version.Model.LabelCount;
        var random = (labels - 1) / (double)labels;
        var drift = Math.Min(gate.TargetError + gate.Test.Delta, random);
        var settings = LiveMonitorSettings.Create(gate.TargetError, drift, version.Settings.Learner.Lapse, labels, LiveQualityLimits.InControlRunLength);
        return new LiveMonitor(settings);
    }
}
