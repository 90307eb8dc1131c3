namespace TeachServe.Core.Teaching;

/// <summary>
/// Exposure control of test items across sessions. The test pool is shared by every annotator of a project, so an
/// item shown to many sessions is the one whose label spreads (between colluders, or from one session to the next).
/// Sympson &amp; Hetter, "Controlling item-exposure rates in computerized adaptive testing", Proc. 27th Conf.
/// Military Testing Association, 1985: an item selected for a test is administered with probability K_i and
/// otherwise passed over, so that its exposure rate P(selected)·K_i stays at or below the target r_max. They tune
/// K by repeated simulation before testing; here K is set from the rates observed so far, when a session starts,
/// as K_i = min(1, r_max / observed rate_i) (the on-line form, common practice in adaptive testing: from memory,
/// e.g. Chen, Lei &amp; Liao, "Controlling item exposure and test overlap on the fly in computerized adaptive
/// testing", 2008).
/// </summary>
public static class ExposureControl
{
    /// <summary>
    /// K per test item. <paramref name="sessionsShown"/>[i] is the number of sessions that were shown test item i,
    /// <paramref name="testedSessions"/> the number of sessions that were shown any test item. An item shown to no
    /// session yet, or a project with no tested session, gets 1.
    /// </summary>
    public static double[] AdministrationProbabilities(ReadOnlySpan<int> sessionsShown, int testedSessions, double maxExposure)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(testedSessions);
        if (!(maxExposure > 0 && maxExposure <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(maxExposure), maxExposure, "The exposure target must be in (0, 1].");
        }

        var k = new double[sessionsShown.Length];
        for (var i = 0; i < k.Length; i++)
        {
            var shown = sessionsShown[i];
            k[i] = testedSessions > 0 && shown > 0 ? Math.Min(1.0, maxExposure * testedSessions / shown) : 1.0;
        }

        return k;
    }
}
