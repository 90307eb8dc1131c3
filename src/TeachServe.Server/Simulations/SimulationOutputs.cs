using System.Globalization;
using System.Text;
using TeachServe.Core.Csv;
using TeachServe.Core.Simulation;

namespace TeachServe.Server.Simulations;

/// <summary>A finished simulation as CSV, one row per policy × variant (its plot is <see cref="TeachServe.Plots.SimulationCurves"/>).</summary>
public static class SimulationOutputs
{
    public static string Csv(IReadOnlyList<SimulationResult> results)
    {
        var csv = CsvCells.AppendRow(new StringBuilder(), "policy", "variant", "learners", "released", "releaseRate", "releasePrecision",
            "unqualified", "unqualifiedReleased", "meanTeachingItems", "meanTestItems", "meanTeachingItemsToRelease", "meanFinalTrueError");
        foreach (var r in results)
        {
            CsvCells.AppendRow(csv, r.Policy, SimulationRequests.VariantName(r.Variant), N(r.Learners), N(r.Released), N(r.ReleaseRate),
                N(r.ReleasePrecision), N(r.Unqualified), N(r.UnqualifiedReleased), N(r.MeanTeachingItems), N(r.MeanTestItems),
                N(r.MeanTeachingItemsToRelease), N(r.MeanFinalTrueError));
        }
        return csv.ToString();
    }

    private static string N(double x) => double.IsFinite(x) ? x.ToString("R", CultureInfo.InvariantCulture) : "";
}
