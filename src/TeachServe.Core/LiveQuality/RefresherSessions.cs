using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// A refresher served as an ordinary session (the server's annotator page, replay and crash safety work unchanged):
/// the onboarding options of the annotator's model version, started from their live belief, taught by the adaptive
/// policy (DESIGN 2.4: the items whose labels the belief says they now get wrong and that lower the predicted error
/// most) for at most <see cref="RefresherSettings.MaxItems"/> items, then one attempt of the project's own held-out
/// test (no varied opening: the first item is the one the belief points to). Passing it therefore means what passing onboarding means, at the same nominal error rates, with the whole
/// false-release rate beta spent on that one attempt.
/// </summary>
public static class RefresherSessions
{
    public static SessionOptions Options(SessionOptions onboarding, RefresherSettings settings, IReadOnlyList<double> startWeights)
    {
        ArgumentNullException.ThrowIfNull(onboarding);
        ArgumentNullException.ThrowIfNull(settings);
        ArgumentNullException.ThrowIfNull(startWeights);
        settings.Validate();
        return onboarding with
        {
            Policy = PolicyNames.Adaptive,
            StartWeights = startWeights,
            Gate = onboarding.Gate with { MaxTeachingItems = settings.MaxItems, Retakes = 0, OpeningVariety = 0 },
        };
    }
}
