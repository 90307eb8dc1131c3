using TeachServe.Core;

namespace TeachServe.Plots.Tests;

public class AxisRangeTests
{
    [Theory]
    [InlineData(0.123, 0.13)]
    [InlineData(0.12, 0.12)]
    [InlineData(0.47, 0.5)]
    [InlineData(0.031, 0.035)]
    [InlineData(1.0, 1.0)]
    [InlineData(24.8, 25)]
    [InlineData(137, 140)]
    [InlineData(7, 7)]
    [InlineData(7.2, 7.5)]
    [InlineData(0, 1)]
    [InlineData(double.NaN, 1)]
    public void RoundUp_goes_to_the_next_round_number(double value, double expected) =>
        Assert.Equal(expected, AxisRanges.RoundUp(value), 12);

    [Fact]
    public void Rate_ranges_start_at_0_end_at_most_at_1_and_hold_every_finite_value()
    {
        var random = new SeededRandom(6);
        for (var trial = 0; trial < 2000; trial++)
        {
            var scale = random.NextDouble();
            var values = Enumerable.Range(0, 1 + random.NextInt(40))
                .Select(_ => random.NextInt(10) == 0 ? double.NaN : scale * random.NextDouble()).ToArray();
            var range = AxisRanges.Rate(values);
            Assert.Equal(0, range.Low);
            Assert.InRange(range.High, 0.05, 1);
            Assert.All(values.Where(double.IsFinite), v => Assert.True(range.Contains(v), $"{v} outside [0, {range.High}]"));
            // Tight: a round step is at most a fifth of the value, so the axis ends within a quarter above the largest.
            if (!values.Any(double.IsFinite)) continue;
            var max = values.Where(double.IsFinite).Max();
            Assert.True(range.High <= Math.Max(0.05, 1.25 * max), $"{range.High} for {max}");
        }
    }

    [Fact]
    public void Count_ranges_start_at_0_and_hold_every_count()
    {
        var random = new SeededRandom(7);
        for (var trial = 0; trial < 2000; trial++)
        {
            var counts = Enumerable.Range(0, 1 + random.NextInt(20)).Select(_ => (double)random.NextInt(1 + random.NextInt(500))).ToArray();
            var range = AxisRanges.Count(counts);
            Assert.Equal(0, range.Low);
            Assert.True(range.High >= 1);
            Assert.All(counts, c => Assert.True(c < range.High, $"{c} reaches the top {range.High}"));
        }
    }

    [Fact]
    public void Without_data_rates_span_0_to_1_and_counts_0_to_1()
    {
        Assert.Equal(new AxisRange(0, 1), AxisRanges.Rate([]));
        Assert.Equal(new AxisRange(0, 1), AxisRanges.Rate([double.NaN, double.PositiveInfinity]));
        Assert.Equal(new AxisRange(0, 1), AxisRanges.Count([]));
        Assert.Equal(new AxisRange(0, 5), AxisRanges.Steps([]));
        Assert.Equal(new AxisRange(0, 12), AxisRanges.Steps([3, 12, 7]));
    }

    [Fact]
    public void Room_below_is_a_sliver_under_0_for_rates()
    {
        var shown = new AxisRange(0, 0.5).WithRoomBelow();
        Assert.Equal(-0.01, shown.Low, 12);
        Assert.Equal(0.5, shown.High);
    }
}
