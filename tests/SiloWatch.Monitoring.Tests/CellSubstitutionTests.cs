using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

/// <summary>
/// A failed cell of a fully weighed silo is replaced by the share it carried in a clean period before
/// the failure, not by shares the failure itself had already biased. Generated signals with known truth.
/// </summary>
public sealed class CellSubstitutionTests
{
    private static int Index(Plant.SiloRef silo, string id) => silo.Sensors.Single(s => s.Id == id).Index;

    [Fact]
    public void ACellDeadAtZeroIsLeftOutAtOnceAndReplacedByItsShareFromBeforeTheFailure()
    {
        // An off-centre load makes the shares unequal, so equal shares would be wrong: LC1 carries about 9 % more than a quarter.
        var (monitor, time, silo, model) = DemoPlant.Monitor("F1");
        var source = new SignalSource(silo, model) { EccentricityM = 0.25, EccentricityAzimuthDeg = 45 };
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 20, _ => 0);
        monitor.Tare("commissioning", t);
        var mass = 0.6 * model.CapacityKg;
        t = source.Run(monitor, t + 1000, 400, _ => mass);

        // LC1, the most loaded cell, fails to a 0 mV/V reading (within its range: only its share gives it away).
        source.Frozen["LC1"] = 0.0;
        var errors = new List<double>();
        var covered = 0;
        for (var i = 0; i < 200; i++)
        {
            t = source.Run(monitor, t + 1000, 1, j => mass + (10.0 * i));
            var e = monitor.Evaluate(t);
            errors.Add(Math.Abs(e.MassKg - (mass + (10.0 * i))));
            covered += mass + (10.0 * i) >= e.MassLow95Kg && mass + (10.0 * i) <= e.MassHigh95Kg ? 1 : 0;
        }

        var last = monitor.Evaluate(t);
        Assert.Contains("replaced by its expected share", last.QualityReason, StringComparison.Ordinal);
        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC1"), t) & (QualityFlags.Stuck | QualityFlags.Drift));
        // Without the clean-period share the other three would stand for 1 − (biased share), several percent off.
        Assert.True(errors.Max() < 0.005 * mass, $"largest error {errors.Max():0} kg of {mass:0} kg ({last.QualityReason})");
        Assert.True(covered >= 190, $"interval covered the truth {covered} of 200 times");
        Assert.Equal(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC2"), t) & QualityFlags.Drift);
    }

    [Fact]
    public void ACellRecoveringFromItsFailureIsUsedAgain()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("F1");
        var source = new SignalSource(silo, model) { EccentricityM = 0.2, EccentricityAzimuthDeg = 100 };
        var mass = 0.5 * model.CapacityKg;
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 400, _ => mass);
        source.Frozen["LC3"] = 0.0;
        t = source.Run(monitor, t + 1000, 30, _ => mass);
        Assert.Contains("replaced", monitor.Evaluate(t).QualityReason, StringComparison.Ordinal);

        source.Frozen.Remove("LC3");
        t = source.Run(monitor, t + 1000, 90, _ => mass);
        var e = monitor.Evaluate(t);

        Assert.DoesNotContain("replaced", e.QualityReason, StringComparison.Ordinal);
        Assert.InRange(mass, e.MassLow95Kg, e.MassHigh95Kg);
    }

    [Fact]
    public void ACellBackAfterAGapIsTakenAtItsNewValueNotHeldAtItsOldOne()
    {
        // LC2 silent for five minutes while the silo discharges 60 t; its first samples back differ from
        // its history before the gap, which is news, not a spike.
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 20, _ => 0);
        monitor.Tare("commissioning", t);
        var start = 0.8 * model.CapacityKg;
        t = source.Run(monitor, t + 1000, 400, _ => start);
        source.Silent.Add("LC2");
        t = source.Run(monitor, t + 1000, 300, i => start - (200.0 * i));
        source.Silent.Remove("LC2");
        var worst = 0.0;
        for (var i = 0; i < 30; i++)
        {
            var truth = start - (200.0 * (300 + i));
            t = source.Run(monitor, t + 1000, 1, _ => truth);
            var e = monitor.Evaluate(t);
            worst = Math.Max(worst, Math.Abs(e.MassKg - truth));
            Assert.InRange(truth, e.MassLow95Kg, e.MassHigh95Kg);
        }

        Assert.Equal(QualityFlags.None, monitor.SensorFlags(silo.Sensors.Single(s => s.Id == "LC2").Index, t) & QualityFlags.Spike);
        Assert.True(worst < 0.002 * start, $"worst error {worst:0} kg after the gap");
    }

    [Fact]
    public void WithoutACleanPeriodTheGeometricShareStandsInWithItsWiderSpread()
    {
        // LC2 silent from the start: no share was ever learned, so equal shares (geometry) stand in, with the
        // spread an unknown off-centre load gives; the truth has e = 0.15 m and must stay inside the interval.
        var (monitor, time, silo, model) = DemoPlant.Monitor("F1");
        var source = new SignalSource(silo, model) { EccentricityM = 0.15, EccentricityAzimuthDeg = 135 };
        source.Silent.Add("LC2");
        var mass = 0.7 * model.CapacityKg;
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 120, _ => mass);
        var geometric = monitor.Evaluate(t);

        var (learnedMonitor, learnedTime, _, _) = DemoPlant.Monitor("F1");
        var learnedSource = new SignalSource(silo, model) { EccentricityM = 0.15, EccentricityAzimuthDeg = 135 };
        var t2 = learnedSource.Run(learnedMonitor, learnedTime.GetUtcNow().ToUnixTimeMilliseconds(), 400, _ => mass);
        learnedSource.Silent.Add("LC2");
        t2 = learnedSource.Run(learnedMonitor, t2 + 1000, 120, _ => mass);
        var learned = learnedMonitor.Evaluate(t2);

        Assert.InRange(mass, geometric.MassLow95Kg, geometric.MassHigh95Kg);
        Assert.InRange(mass, learned.MassLow95Kg, learned.MassHigh95Kg);
        Assert.True(Math.Abs(learned.MassKg - mass) < Math.Abs(geometric.MassKg - mass), "the learned share must beat geometry");
        Assert.True(learned.MassHigh95Kg - learned.MassLow95Kg < geometric.MassHigh95Kg - geometric.MassLow95Kg, "and state a narrower interval");
    }

    [Fact]
    public void TheSubstitutedSharesSpreadGrowsWithTheTimeSinceAtTheRateThePatternMoved()
    {
        // Four cells; the pattern walks slowly (an off-centre fill), then cell 0 fails.
        var detector = new ShareDriftDetector(4, learnTimeS: 6 * 3600, smoothTimeS: 30, tolerance: 0.04, guardS: 120, geometryStd: 0.025);
        var net = new double[4];
        var t = 0L;
        for (var i = 0; i < 1200; i++)
        {
            var tilt = 0.02 * i / 1200.0;
            net[0] = 250 * (1 + tilt);
            net[1] = 250 * (1 - tilt);
            net[2] = 250;
            net[3] = 250;
            t = i * 1000L;
            detector.Update(net, t, significantLoad: true);
        }

        detector.BeginSubstitution(1, t);
        var early = detector.SubstituteShareStd(0, t);
        var later = detector.SubstituteShareStd(0, t + 1_800_000);
        var muchLater = detector.SubstituteShareStd(0, t + 86_400_000);

        // The share is from before the guard: within the walk over that time of the last clean share.
        Assert.InRange(detector.SubstituteShare(0), 0.25 * 1.015, 0.25 * 1.02);
        Assert.True(later > early, $"σ {early:0.00000} then {later:0.00000}");
        Assert.True(muchLater <= 0.025 + 1e-12, "never beyond the geometric spread");
    }
}
