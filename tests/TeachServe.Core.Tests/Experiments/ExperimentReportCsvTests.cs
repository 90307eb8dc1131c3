using TeachServe.Core.Experiments;
using TeachServe.Core.Projects;
using static TeachServe.Core.Tests.Experiments.ExperimentSamples;

namespace TeachServe.Core.Tests.Experiments;

public class ExperimentReportCsvTests
{
    [Fact]
    public void One_row_per_annotator_with_the_documented_columns()
    {
        var definition = Definition() with { Arms = [new ArmDefinition { Name = "control", Policy = PolicyNames.Random }, new ArmDefinition { Name = "adaptive, blend 2", Policy = PolicyNames.Adaptive }] };
        AnnotatorOutcome[] outcomes =
        [
            new(1, "w-1", new DateTimeOffset(2025, 3, 4, 9, 30, 0, 125, TimeSpan.FromHours(2)), true, true, 20, 3, 14, TimeSpan.FromSeconds(612.5), 0.0625),
            new(0, "say \"hi\"\nthere", Start, false, false, 0, 0, 2, null, double.NaN),
        ];
        var csv = ExperimentReportCsv.ToCsv(definition, outcomes);
        Assert.Equal(
            "arm,workerRef,started,finished,released,testAnswered,testErrors,testError,teachingItems,secondsToRelease,predictedError\r\n" +
            "\"adaptive, blend 2\",w-1,2025-03-04T09:30:00.1250000+02:00,true,true,20,3,0.15,14,612.5,0.0625\r\n" +
            "control,\"say \"\"hi\"\"\nthere\",2025-03-04T09:30:00.0000000+00:00,false,false,0,0,,2,,\r\n",
            csv);

        // The project's own RFC 4180 reader gets the same cells back.
        var reader = new CsvRecordReader(new StringReader(csv));
        var header = reader.Read()!;
        Assert.Equal(ExperimentReportCsv.Columns, header.Cells);
        var first = reader.Read()!;
        var second = reader.Read()!;
        Assert.Null(reader.Read());
        Assert.Null(first.Error);
        Assert.Equal("adaptive, blend 2", first.Cells[0]);
        Assert.Equal("say \"hi\"\nthere", second.Cells[1]);
        Assert.Equal(11, second.Cells.Count);
    }

    [Fact]
    public void Numbers_round_trip_in_the_invariant_culture()
    {
        var outcome = new AnnotatorOutcome(0, "w", Start, true, false, 3, 1, 7, null, 0.1 + 0.2);
        var row = ExperimentReportCsv.ToCsv(Definition(), [outcome]).Split("\r\n")[1].Split(',');
        Assert.Equal(1.0 / 3, double.Parse(row[7], System.Globalization.CultureInfo.InvariantCulture));
        Assert.Equal(0.1 + 0.2, double.Parse(row[10], System.Globalization.CultureInfo.InvariantCulture));
    }

    [Fact]
    public void An_empty_experiment_writes_the_header_only()
    {
        Assert.Equal(string.Join(",", ExperimentReportCsv.Columns) + "\r\n", ExperimentReportCsv.ToCsv(Definition(), []));
    }

    [Fact]
    public void An_unknown_arm_is_rejected()
    {
        Assert.Throws<ArgumentException>(() => ExperimentReportCsv.ToCsv(Definition(), [new AnnotatorOutcome(5, "w", Start, false, false, 0, 0, 0, null, 0)]));
    }
}
