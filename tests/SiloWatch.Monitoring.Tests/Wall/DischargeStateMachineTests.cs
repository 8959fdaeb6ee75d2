using SiloWatch.Monitoring.Tests.Wall.Support;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests.Wall;

public sealed class DischargeStateMachineTests
{
    private static readonly WallWatchOptions Options = new()
    {
        EnterRateKgPerS = 2,
        ExitRateKgPerS = 0.8,
        StateOnsetDelay = TimeSpan.FromSeconds(3),
        StateEndDelay = TimeSpan.FromSeconds(15),
        SettlingTime = TimeSpan.FromMinutes(2),
        MinStateDuration = TimeSpan.FromSeconds(5),
    };

    private static List<DischargeStateChange> Run(DischargeStateMachine m, ref long t, int seconds, double rate, double halfWidth = 0.5)
    {
        var changes = new List<DischargeStateChange>();
        for (var i = 0; i < seconds; i++, t += 1000)
        {
            if (m.Update(t, Inventory.At(t, 100_000, rate, halfWidth)) is { } c)
            {
                changes.Add(c);
            }
        }

        return changes;
    }

    [Fact]
    public void ADischargeIsConfirmedAfterTheOnsetDelayWithTheOnsetWhenTheEvidenceBegan()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Run(m, ref t, 10, 0);
        var onset = t;
        var changes = Run(m, ref t, 10, -20);

        var c = Assert.Single(changes);
        Assert.Equal(DischargeState.Discharging, c.To);
        Assert.Equal(onset, c.OnsetMs);
        Assert.Equal(onset + 3000, c.TimestampMs);
    }

    [Fact]
    public void ABriefRateExcursionShorterThanTheOnsetDelayChangesNothing()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Run(m, ref t, 10, 0);
        Assert.Empty(Run(m, ref t, 2, -20));
        Assert.Empty(Run(m, ref t, 30, 0));
        Assert.Equal(DischargeState.Idle, m.State);
    }

    [Fact]
    public void ARateWhoseIntervalStillIncludesZeroIsNoEvidence()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Assert.Empty(Run(m, ref t, 60, -3, halfWidth: 5));
        Assert.Equal(DischargeState.Idle, m.State);
    }

    [Fact]
    public void TheHysteresisBandNeitherEndsADischargeNorStartsOne()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Run(m, ref t, 10, 0);
        Run(m, ref t, 20, -20);
        Assert.Equal(DischargeState.Discharging, m.State);
        Assert.Empty(Run(m, ref t, 120, -1.5, halfWidth: 0.1)); // between exit 0.8 and enter 2
        Assert.Equal(DischargeState.Discharging, m.State);
    }

    [Fact]
    public void ADischargeEndsThroughSettlingIntoIdle()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Run(m, ref t, 10, 0);
        Run(m, ref t, 60, -20);
        var changes = Run(m, ref t, 200, 0);

        Assert.Equal([DischargeState.Settling, DischargeState.Idle], changes.Select(c => c.To));
        Assert.Equal(15_000, changes[0].TimestampMs - (70_000));                    // end delay
        Assert.Equal(120_000, changes[1].TimestampMs - changes[0].TimestampMs);     // settling time
    }

    [Fact]
    public void ADischargeResumedWhileSettlingKeepsItsOriginalOnset()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Run(m, ref t, 10, 0);
        var first = Run(m, ref t, 60, -20).Single();
        Run(m, ref t, 20, 0);
        Assert.Equal(DischargeState.Settling, m.State);
        var resumed = Run(m, ref t, 10, -20).Single();

        Assert.Equal(DischargeState.Discharging, resumed.To);
        Assert.Equal(first.OnsetMs, resumed.OnsetMs);
    }

    [Fact]
    public void ABadEstimateHoldsTheState()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Run(m, ref t, 10, 0);
        Run(m, ref t, 20, -20);
        for (var i = 0; i < 300; i++, t += 1000)
        {
            Assert.Null(m.Update(t, Inventory.At(t, double.NaN, double.NaN, quality: Quality.Bad)));
        }

        Assert.Equal(DischargeState.Discharging, m.State);
    }

    [Fact]
    public void AnOutletSignalDecidesWithoutWaitingForTheRate()
    {
        var m = new DischargeStateMachine(Options);
        long t = 0;
        Run(m, ref t, 10, 0);
        m.OnOutlet(t, open: true);
        var opened = m.Update(t, Inventory.At(t, 100_000, 0));
        Assert.Equal(DischargeState.Discharging, opened?.To);

        // A mass fall with the outlet closed is not a discharge (a leak): the state stays idle.
        var m2 = new DischargeStateMachine(Options);
        long t2 = 0;
        for (var i = 0; i < 60; i++, t2 += 1000)
        {
            m2.OnOutlet(t2, open: false);
            m2.Update(t2, Inventory.At(t2, 100_000, -20));
        }

        Assert.Equal(DischargeState.Idle, m2.State);
    }
}
