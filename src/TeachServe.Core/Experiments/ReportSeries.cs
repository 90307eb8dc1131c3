using MathNet.Numerics.Distributions;

namespace TeachServe.Core.Experiments;

/// <summary>The per-arm series of a report: learning curve, test-error histogram, medians.</summary>
internal static class ReportSeries
{
    public const int HistogramBins = 20;

    private static readonly double Z95 = Normal.InvCDF(0.0, 1.0, 0.975);

    /// <summary>
    /// Mean predicted error by teaching step. At step s an annotator counts if its curve reaches s; an annotator
    /// whose session ended also counts beyond its last point with its last value (its teaching is over, so its
    /// predicted error stays), while one still being taught drops out there (its future is unknown).
    /// </summary>
    public static LearningCurvePoint[] LearningCurve(IEnumerable<AnnotatorOutcome> outcomes)
    {
        var curves = outcomes.Where(o => o.LearningCurve is { Count: > 0 }).ToList();
        if (curves.Count == 0)
            return [];
        var longest = curves.Max(o => o.LearningCurve!.Count);
        var points = new LearningCurvePoint[longest];
        for (var step = 0; step < longest; step++)
        {
            int n = 0;
            double sum = 0, sumSq = 0;
            foreach (var o in curves)
            {
                var curve = o.LearningCurve!;
                if (step >= curve.Count && !o.HasEnded)
                    continue;
                var v = curve[Math.Min(step, curve.Count - 1)];
                n++;
                sum += v;
                sumSq += v * v;
            }

            var mean = sum / n;
            if (n < 2)
            {
                points[step] = new LearningCurvePoint(step, n, mean, double.NaN, double.NaN);
                continue;
            }

            var variance = Math.Max(0, (sumSq - (n * mean * mean)) / (n - 1));
            var half = Z95 * Math.Sqrt(variance / n);
            points[step] = new LearningCurvePoint(step, n, mean, mean - half, mean + half);
        }

        return points;
    }

    /// <summary>Test errors in 20 bins of width 0.05, binned on the counts so that e.g. 3/20 lands in [0.15, 0.20) exactly.</summary>
    public static HistogramBin[] TestErrorHistogram(IEnumerable<AnnotatorOutcome> tested)
    {
        var counts = new int[HistogramBins];
        foreach (var o in tested)
        {
            var bin = (int)Math.Min(HistogramBins - 1, (long)o.TestErrors * HistogramBins / o.TestAnswered);
            counts[bin]++;
        }

        var bins = new HistogramBin[HistogramBins];
        for (var k = 0; k < HistogramBins; k++)
            bins[k] = new HistogramBin((double)k / HistogramBins, (k + 1.0) / HistogramBins, counts[k]);
        return bins;
    }

    /// <summary>The median (mean of the middle two for an even count); NaN for none.</summary>
    public static double Median(IEnumerable<double> values)
    {
        var sorted = values.Order().ToArray();
        if (sorted.Length == 0)
            return double.NaN;
        var mid = sorted.Length / 2;
        return sorted.Length % 2 == 1 ? sorted[mid] : (sorted[mid - 1] + sorted[mid]) / 2;
    }

    /// <summary>The median duration, to the tick; <see langword="null"/> for none.</summary>
    public static TimeSpan? Median(IEnumerable<TimeSpan> values)
    {
        var sorted = values.Order().ToArray();
        if (sorted.Length == 0)
            return null;
        var mid = sorted.Length / 2;
        if (sorted.Length % 2 == 1)
            return sorted[mid];
        long a = sorted[mid - 1].Ticks, b = sorted[mid].Ticks;
        return TimeSpan.FromTicks(a + ((b - a) / 2));
    }
}
