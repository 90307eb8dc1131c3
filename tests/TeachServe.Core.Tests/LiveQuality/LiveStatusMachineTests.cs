using TeachServe.Core.LiveQuality;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

public sealed class LiveStatusMachineTests
{
    [Theory]
    [InlineData(LiveStatus.Reliable, false, false, LiveStatus.Reliable)]
    [InlineData(LiveStatus.Reliable, false, true, LiveStatus.Watch)]
    [InlineData(LiveStatus.Reliable, true, false, LiveStatus.RefresherDue)]
    [InlineData(LiveStatus.Watch, false, true, LiveStatus.Watch)]
    [InlineData(LiveStatus.Watch, false, false, LiveStatus.Reliable)]
    [InlineData(LiveStatus.Watch, true, true, LiveStatus.RefresherDue)]
    [InlineData(LiveStatus.RefresherDue, false, false, LiveStatus.RefresherDue)]
    [InlineData(LiveStatus.RefresherDue, false, true, LiveStatus.RefresherDue)]
    [InlineData(LiveStatus.RefresherDue, true, false, LiveStatus.Paused)]
    [InlineData(LiveStatus.Paused, false, false, LiveStatus.Paused)]
    [InlineData(LiveStatus.Paused, true, true, LiveStatus.Paused)]
    public void A_live_check_moves_the_status_as_documented(LiveStatus from, bool alarm, bool watch, LiveStatus expected) =>
        Assert.Equal(expected, LiveStatusMachine.AfterCheck(from, new LiveSignals(alarm, watch)));

    [Theory]
    [InlineData(LiveStatus.Reliable)]
    [InlineData(LiveStatus.Watch)]
    [InlineData(LiveStatus.RefresherDue)]
    [InlineData(LiveStatus.Paused)]
    public void A_refresher_decides_alone(LiveStatus from)
    {
        Assert.Equal(LiveStatus.Reliable, LiveStatusMachine.AfterRefresher(from, RefresherOutcome.Passed));
        Assert.Equal(LiveStatus.Paused, LiveStatusMachine.AfterRefresher(from, RefresherOutcome.Failed));
    }
}
