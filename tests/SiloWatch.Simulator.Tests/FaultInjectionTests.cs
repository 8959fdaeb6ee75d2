using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class FaultInjectionTests
{
    private static readonly TimeSpan FaultAt = TimeSpan.FromMinutes(2);
    private static readonly TimeSpan FaultFor = TimeSpan.FromMinutes(3);

    [Fact]
    public void AStuckGaugeSendsOneConstantValueWhileTheSiloFills()
    {
        var run = Run(Fault("S1", "SG-R1-060", FaultKind.Stuck));
        var (during, outside) = Split(run.Series("S1", "SG-R1-060"));
        Assert.True(during.Count > 100);
        Assert.Single(during.Distinct());
        Assert.True(outside.Distinct().Count() > 50, "outside the fault the gauge moves with load and noise");
        // Its neighbour keeps moving through the same minutes.
        var (neighbour, _) = Split(run.Series("S1", "SG-R1-120"));
        Assert.True(neighbour.Distinct().Count() > 50);
    }

    [Fact]
    public void ADeadCellFallsSilentAndComesBackAfterTheFault()
    {
        var run = Run(Fault("S1", "LC2", FaultKind.Dead));
        var start = run.Ticks[0].Time;
        var series = run.Series("S1", "LC2");
        Assert.DoesNotContain(series, p => p.Time >= start + FaultAt && p.Time < start + FaultAt + FaultFor);
        Assert.Contains(series, p => p.Time >= start + FaultAt + FaultFor);
        // The other cells of the silo keep reporting every second.
        var (lc1During, _) = Split(run.Series("S1", "LC1"));
        Assert.Equal((int)FaultFor.TotalSeconds, lc1During.Count);
    }

    [Fact]
    public void ADeadCellThatSendsZeroSendsExactlyZero()
    {
        var e = Fault("F1", "LC3", FaultKind.Dead);
        e.SendZero = true;
        var (during, outside) = Split(Run(e).Series("F1", "LC3"));
        Assert.All(during, v => Assert.Equal(0.0, v));
        Assert.DoesNotContain(0.0, outside);
    }

    [Fact]
    public void ADriftingCellDepartsFromItsTwinByTheConfiguredRamp()
    {
        // The drift fault draws no random numbers, so a run with the same seed without the fault is its exact twin.
        var drift = Fault("S2", "LC1", FaultKind.Drift);
        drift.DriftPerHour = 0.06;
        var faulty = Run(drift).Series("S2", "LC1");
        var healthy = Run(null).Series("S2", "LC1");
        var start = faulty[0].Time;
        var probe = start + FaultAt + TimeSpan.FromMinutes(2.5);
        var difference = faulty.Single(p => p.Time == probe).Value - healthy.Single(p => p.Time == probe).Value;
        // 0.06 mV/V per hour for 2.5 min = 0.0025 mV/V; values are rounded to 1e-6 mV/V.
        Assert.Equal(0.0025, difference, 3e-6);
    }

    [Fact]
    public void SpikesStandOutOfTheSignal()
    {
        var e = Fault("S1", "LC4", FaultKind.Spikes);
        e.SpikeSize = 0.3;
        e.SpikesPerMinute = 6;
        var series = Run(e).Series("S1", "LC4");
        var jumps = series.Zip(series.Skip(1), (a, b) => Math.Abs(b.Value - a.Value)).Count(d => d > 0.2);
        // ~18 spikes expected in 3 min; each makes two jumps (up and back).
        Assert.InRange(jumps, 10, 80);
    }

    [Fact]
    public void TheTruthListsAFaultOnlyWhileItIsActive()
    {
        var run = Run(Fault("S1", "LC2", FaultKind.Dead));
        var start = run.Ticks[0].Time;
        var rows = run.Ticks.SelectMany(t => t.Truth).Where(r => r.Silo == "S1").ToList();
        Assert.All(rows.Where(r => r.Time > start + FaultAt && r.Time < start + FaultAt + FaultFor), r => Assert.Equal("LC2:Dead", r.Faults));
        Assert.All(rows.Where(r => r.Time < start + FaultAt || r.Time >= start + FaultAt + FaultFor), r => Assert.Equal("", r.Faults));
    }

    private static ScenarioEvent Fault(string silo, string sensor, FaultKind kind) =>
        new() { At = FaultAt, Type = ScenarioEventType.Fault, Silo = silo, Sensor = sensor, Fault = kind, Duration = FaultFor };

    private static StreamCollector Run(ScenarioEvent? fault)
    {
        var b = new ScenarioBuilder()
            .Lasting(TimeSpan.FromMinutes(7))
            .WithFill("S1", 30).WithFill("S2", 30).WithFill("F1", 30)
            .With(new ScenarioEvent { At = TimeSpan.FromMinutes(1), Type = ScenarioEventType.Delivery, Silo = "S1", MassKg = 40000, RateKgPerS = 80 })
            .With(new ScenarioEvent { At = TimeSpan.FromMinutes(1), Type = ScenarioEventType.Delivery, Silo = "F1", MassKg = 20000, RateKgPerS = 40 });
        if (fault is not null)
        {
            b.With(fault);
        }

        return StreamCollector.RunToEnd(TestPlant.Model(b.Build()));
    }

    private static (List<double> During, List<double> Outside) Split(List<(DateTimeOffset Time, double Value)> series)
    {
        var start = series[0].Time;
        bool In(DateTimeOffset t) => t >= start + FaultAt && t < start + FaultAt + FaultFor;
        return ([.. series.Where(p => In(p.Time)).Select(p => p.Value)], [.. series.Where(p => !In(p.Time)).Select(p => p.Value)]);
    }
}
