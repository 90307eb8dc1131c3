using System.Globalization;
using TeachServe.Core.Csv;

namespace TeachServe.Core.Experiments;

/// <summary>
/// Writes an experiment's outcomes as CSV, one row per annotator, for researchers to analyse elsewhere: RFC 4180
/// (CRLF line ends, a cell quoted when it holds a comma, quote or line break, quotes doubled), invariant culture,
/// times in ISO 8601 round-trip form, numbers in shortest round-trip form, and an empty cell for a missing value.
/// Text cells (worker references, arm names) are formula-neutralised by <see cref="CsvCells"/>.
/// </summary>
public static class ExperimentReportCsv
{
    public static readonly IReadOnlyList<string> Columns =
    [
        "arm", "workerRef", "started", "finished", "released", "testAnswered", "testErrors", "testError",
        "teachingItems", "secondsToRelease", "predictedError",
    ];

    /// <summary>Writes the header and one row per outcome, in the given order; the arm column holds the arm's name.</summary>
    /// <exception cref="ArgumentException">An outcome's arm is not an arm of <paramref name="definition"/>.</exception>
    public static void Write(TextWriter writer, ExperimentDefinition definition, IReadOnlyList<AnnotatorOutcome> outcomes)
    {
        ArgumentNullException.ThrowIfNull(writer);
        ArgumentNullException.ThrowIfNull(definition);
        ArgumentNullException.ThrowIfNull(outcomes);
        CsvCells.WriteRow(writer, Columns);
        var cells = new string[Columns.Count];
        for (var i = 0; i < outcomes.Count; i++)
        {
            var o = outcomes[i];
            if (o.Arm < 0 || o.Arm >= (definition.Arms?.Count ?? 0))
                throw new ArgumentException($"outcomes[{i}].arm is {o.Arm}, not an arm of the experiment.", nameof(outcomes));
            cells[0] = definition.Arms![o.Arm].Name;
            cells[1] = o.WorkerRef ?? string.Empty;
            cells[2] = o.Started.ToString("O", CultureInfo.InvariantCulture);
            cells[3] = o.HasEnded ? "true" : "false";
            cells[4] = o.Released ? "true" : "false";
            cells[5] = o.TestAnswered.ToString(CultureInfo.InvariantCulture);
            cells[6] = o.TestErrors.ToString(CultureInfo.InvariantCulture);
            cells[7] = Number(o.TestError);
            cells[8] = o.TeachingItems.ToString(CultureInfo.InvariantCulture);
            cells[9] = o.TimeToRelease is { } t ? Number(t.TotalSeconds) : string.Empty;
            cells[10] = Number(o.PredictedError);
            CsvCells.WriteRow(writer, cells);
        }
    }

    /// <summary>The CSV as a string (see <see cref="Write"/>).</summary>
    public static string ToCsv(ExperimentDefinition definition, IReadOnlyList<AnnotatorOutcome> outcomes)
    {
        using var writer = new StringWriter(CultureInfo.InvariantCulture);
        Write(writer, definition, outcomes);
        return writer.ToString();
    }

    private static string Number(double value) =>
        double.IsFinite(value) ? value.ToString("R", CultureInfo.InvariantCulture) : string.Empty;
}
