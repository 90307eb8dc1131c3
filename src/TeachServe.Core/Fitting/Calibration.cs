using TeachServe.Core.Model;
using TeachServe.Core.Statistics;

namespace TeachServe.Core.Fitting;

/// <summary>
/// Calibration of predicted error against held-out test error: a binned reliability table with Wilson intervals
/// (Wilson 1927) and the Brier score over test answers (Brier 1950). Common practice for probability forecasts.
/// </summary>
public static class Calibration
{
    /// <summary>
    /// From recorded sessions: each session with a <see cref="RecordedSession.PredictedError"/> contributes the test
    /// answers after its last teaching step (the final test attempt, which that prediction did not see).
    /// Sessions without a prediction or without such test answers are left out.
    /// </summary>
    /// <exception cref="ArgumentException">No session has both a prediction and test answers after it.</exception>
    public static CalibrationReport Compute(ModelVersion model, IReadOnlyList<RecordedSession> sessions, CalibrationOptions? options = null)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(sessions);
        var cases = new List<CalibrationCase>(sessions.Count);
        foreach (var session in sessions)
        {
            if (session?.PredictedError is not { } predicted)
            {
                continue;
            }

            var steps = session.Steps;
            var last = steps.Count - 1;
            while (last >= 0 && !steps[last].Teaching)
            {
                last--;
            }

            int answered = 0, errors = 0;
            for (var t = last + 1; t < steps.Count; t++)
            {
                var step = steps[t];
                if ((uint)step.Item >= (uint)model.ItemCount)
                {
                    throw new ArgumentException($"Item {step.Item} is not in the model version ({model.ItemCount} items).", nameof(sessions));
                }

                answered++;
                if (step.Label != model.TrueLabel(step.Item))
                {
                    errors++;
                }
            }

            if (answered > 0)
            {
                cases.Add(new CalibrationCase(predicted, answered, errors));
            }
        }

        if (cases.Count == 0)
        {
            throw new ArgumentException("No recorded session has a predicted error followed by test answers; nothing to calibrate.", nameof(sessions));
        }

        return Compute(cases, options);
    }

    /// <summary>From per-session figures (for example the evidence stored with releases and failures).</summary>
    /// <exception cref="ArgumentException">No cases, or none with test answers.</exception>
    public static CalibrationReport Compute(IReadOnlyList<CalibrationCase> cases, CalibrationOptions? options = null)
    {
        ArgumentNullException.ThrowIfNull(cases);
        options ??= new CalibrationOptions();
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(options.Bins, nameof(options.Bins));
        if (!(options.MaxPredicted > 0 && options.MaxPredicted <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.MaxPredicted, "MaxPredicted must lie in (0, 1].");
        }

        if (!(options.Confidence > 0 && options.Confidence < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.Confidence, "Confidence must lie strictly between 0 and 1.");
        }

        var bins = options.Bins;
        var sessions = new int[bins];
        var answered = new int[bins];
        var errors = new int[bins];
        var predictedSum = new double[bins];
        double brier = 0;
        int totalSessions = 0, totalAnswered = 0, totalErrors = 0;
        foreach (var c in cases)
        {
            if (!(c.PredictedError >= 0 && c.PredictedError <= 1))
            {
                throw new ArgumentException($"Predicted error {c.PredictedError} is not a probability.", nameof(cases));
            }

            if (c.TestAnswered < 0 || c.TestErrors < 0 || c.TestErrors > c.TestAnswered)
            {
                throw new ArgumentException($"Test errors {c.TestErrors} of {c.TestAnswered} answers is not a count.", nameof(cases));
            }

            if (c.TestAnswered == 0)
            {
                continue;
            }

            var bin = Math.Min(bins - 1, (int)(c.PredictedError / options.MaxPredicted * bins));
            sessions[bin]++;
            answered[bin] += c.TestAnswered;
            errors[bin] += c.TestErrors;
            predictedSum[bin] += c.PredictedError * c.TestAnswered;
            var p = c.PredictedError;
            brier += (c.TestErrors * (1 - p) * (1 - p)) + ((c.TestAnswered - c.TestErrors) * p * p);
            totalSessions++;
            totalAnswered += c.TestAnswered;
            totalErrors += c.TestErrors;
        }

        if (totalAnswered == 0)
        {
            throw new ArgumentException("No test answers to calibrate against.", nameof(cases));
        }

        var table = new CalibrationBin[bins];
        var width = options.MaxPredicted / bins;
        for (var b = 0; b < bins; b++)
        {
            var empty = answered[b] == 0;
            table[b] = new CalibrationBin(
                b * width,
                b == bins - 1 ? options.MaxPredicted : (b + 1) * width,
                sessions[b],
                answered[b],
                errors[b],
                empty ? double.NaN : predictedSum[b] / answered[b],
                empty ? double.NaN : (double)errors[b] / answered[b],
                empty ? new Interval(double.NaN, double.NaN) : ProportionIntervals.Wilson(errors[b], answered[b], options.Confidence));
        }

        return new CalibrationReport(table, brier / totalAnswered, totalSessions, totalAnswered, totalErrors, options.Confidence);
    }

    /// <summary>The data of a reliability plot for <paramref name="report"/>; the server draws it.</summary>
    public static ReliabilityPlotData ReliabilityPlot(CalibrationReport report)
    {
        ArgumentNullException.ThrowIfNull(report);
        var points = report.Bins
            .Where(b => b.TestAnswered > 0)
            .Select(b => new ReliabilityPoint(b.MeanPredicted, b.MeanObserved, b.ObservedInterval.Low, b.ObservedInterval.High, b.TestAnswered))
            .ToArray();
        var edges = report.Bins.Select(b => b.Lower).Append(report.Bins.Count > 0 ? report.Bins[^1].Upper : 1.0).ToArray();
        return new ReliabilityPlotData(points, edges, edges[^1]);
    }
}
