using System.Collections.Concurrent;
using TeachServe.Core.LiveQuality;
using TeachServe.Server.Versions;

namespace TeachServe.Server.LiveQuality;

/// <summary>
/// The drift monitor of each ready model version, designed once per node. The count CUSUM of
/// <see cref="LiveMonitorSettings.Create"/> from the version's gate target, the drift error target + test delta (capped
/// at the error of answering at random), its lapse and labels, at an exact in-control run length of
/// <see cref="LiveQualityLimits.InControlRunLength"/>; and, when the project watches candidate rules
/// (<c>live.candidateRules</c>), one chart per rule chosen at release by <see cref="DriftCandidates.Choose"/>, whose
/// limit is designed by <see cref="CandidateChartDesign.Limit"/> for the same run length on the version's rules of
/// largest error above target. A candidate chart's in-control ARL is that of the non-lazy chain divided by err(g) (it
/// moves only on items where g errs), so the rules of largest error give the shortest run length and the limit holds for
/// any candidates an annotator gets. The always-valid test stays off.
/// </summary>
public sealed class LiveMonitors
{
    private readonly ConcurrentDictionary<(string, int), LiveModel> _models = new();

    public LiveMonitor For(CompiledVersion version) => ModelOf(version).Monitor;

    /// <summary>The monitor and the model view's lookups of a version.</summary>
    public LiveModel ModelOf(CompiledVersion version) =>
        _models.GetOrAdd((version.ProjectId, version.Number), _ => new LiveModel(version, Design(version)));

    public static LiveMonitor Design(CompiledVersion version)
    {
        var gate = version.Settings.Gate;
        var model = version.Model;
        var labels = model.LabelCount;
        var random = (labels - 1) / (double)labels;
        var drift = Math.Min(gate.TargetError + gate.Test.Delta, random);
        var settings = LiveMonitorSettings.Create(gate.TargetError, drift, version.Settings.Learner.Lapse, labels, LiveQualityLimits.InControlRunLength);
        var count = version.Settings.Live.CandidateRules;
        var worst = Enumerable.Range(0, model.HypothesisCount).Where(h => model.Error[h] > gate.TargetError)
            .OrderByDescending(h => model.Error[h]).ThenBy(h => h).Take(count).ToList();
        if (worst.Count > 0)
        {
            settings = settings with
            {
                CandidateLimit = CandidateChartDesign.Limit(model, worst, settings.TargetAnswerError, LiveQualityLimits.InControlRunLength),
            };
            return new LiveMonitor(settings, model);
        }
        return new LiveMonitor(settings);
    }
}
