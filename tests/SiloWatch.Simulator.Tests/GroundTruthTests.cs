using SiloWatch.Plant;
using SiloWatch.Simulator.Model;
using SiloWatch.Simulator.Output;
using SiloWatch.Simulator.Physics;
using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class GroundTruthTests
{
    [Fact]
    public void DeliveredAndDischargedMassesAddUpInTheTruth()
    {
        var scenario = new ScenarioBuilder().Lasting(TimeSpan.FromMinutes(30)).WithFill("S1", 30).WithFill("C1", 50)
            .With(new ScenarioEvent { At = TimeSpan.FromMinutes(1), Type = ScenarioEventType.Delivery, Silo = "S1", MassKg = 60000, RateKgPerS = 80, Batches = 2, BatchGap = TimeSpan.FromMinutes(2) })
            .With(new ScenarioEvent { At = TimeSpan.FromMinutes(5), Type = ScenarioEventType.Discharge, Silo = "C1", MassKg = 30000, RateKgPerS = 90 })
            .Build();
        var model = TestPlant.Model(scenario);
        var s1 = model.Silos.Single(s => s.Options.Id == "S1");
        var c1 = model.Silos.Single(s => s.Options.Id == "C1");
        var s1Start = s1.MassKg;
        var c1Start = c1.MassKg;
        var run = StreamCollector.RunToEnd(model);
        Assert.Equal(s1Start + 60000, s1.MassKg, 1e-6);
        Assert.Equal(c1Start - 30000, c1.MassKg, 1e-6);

        var rows = run.Ticks.SelectMany(t => t.Truth).Where(r => r.Silo == "S1").ToList();
        Assert.Contains(rows, r => r.Flow == FlowState.Filling);
        Assert.Contains(rows, r => r.Flow == FlowState.Idle && r.Time > rows[0].Time + TimeSpan.FromMinutes(2) && r.Time < rows[0].Time + TimeSpan.FromMinutes(9)); // the gap between wagons
        Assert.True(rows[^1].LevelM > rows[0].LevelM);
    }

    [Fact]
    public void TheWeighedLegsCarryTheContentsAndTheStructure()
    {
        var scenario = new ScenarioBuilder().WithFill("S1", 60).Build();
        var model = TestPlant.Model(scenario);
        model.Step();
        var s1 = model.Silos.Single(s => s.Options.Id == "S1");
        var legs = s1.SupportLoadsKn(new AmbientState(10, double.NaN, 0, 0, 0));
        var expected = (s1.MassKg + s1.Options.Weighing.StructureMassKg) * SolidParameters.StandardGravity / 1000;
        Assert.Equal(expected, legs.Sum(), expected * 1e-12);
    }

    [Fact]
    public void WindLeansTheLegReactionsDownwindWithoutChangingTheirSum()
    {
        var scenario = new ScenarioBuilder().WithFill("S1", 20).Build();
        var model = TestPlant.Model(scenario);
        model.Step();
        var s1 = model.Silos.Single(s => s.Options.Id == "S1");
        var calm = s1.SupportLoadsKn(new AmbientState(10, double.NaN, 0, 0, 225));
        var windy = s1.SupportLoadsKn(new AmbientState(10, double.NaN, 0, 25, 225));
        Assert.Equal(calm.Sum(), windy.Sum(), 1e-6);
        // Wind from 225° pushes toward 45°: leg 1 (at 45°) takes more, leg 3 (at 225°) less.
        Assert.True(windy[0] > calm[0] + 10);
        Assert.True(windy[2] < calm[2] - 10);
    }

    [Fact]
    public void AnOffCentreFillShiftsTheContentsTowardTheSpoutAndLoadsTheNearestLeg()
    {
        // S2 stands on 3 legs (0°, 120°, 240°) and only leg 1 is weighed: an offset toward it reads heavy.
        var scenario = new ScenarioBuilder().Lasting(TimeSpan.FromMinutes(12)).WithFill("S2", 5)
            .With(new ScenarioEvent { At = TimeSpan.FromMinutes(1), Type = ScenarioEventType.Delivery, Silo = "S2", MassKg = 28000, RateKgPerS = 60, FillOffsetRatio = 0.6, FillAzimuthDeg = 0 })
            .Build();
        var model = TestPlant.Model(scenario);
        var run = StreamCollector.RunToEnd(model);
        var last = run.Ticks.SelectMany(t => t.Truth).Last(r => r.Silo == "S2");
        Assert.True(last.EccentricityM > 0.01, $"e = {last.EccentricityM:F3} m");
        Assert.True(RingFit.AngleBetween(last.EccentricityAzimuthDeg, 0) < 1);
        var s2 = model.Silos.Single(s => s.Options.Id == "S2");
        var legs = s2.SupportLoadsKn(new AmbientState(10, double.NaN, 0, 0, 0));
        Assert.True(legs[0] > legs[1] && legs[0] > legs[2]);
        Assert.Equal(legs[1], legs[2], 1e-9);
    }

    [Fact]
    public void TheTruthCsvHasTheDocumentedColumns()
    {
        using var text = new StringWriter();
        using (var w = new TruthCsvWriter(text))
        {
            w.Write(new TruthRow(new DateTimeOffset(2026, 6, 21, 9, 0, 0, TimeSpan.Zero), "brackenford", "S1", 1234.56, 5.4321, 0.01, 90, FlowState.Discharging, -40, 120, 500, 300, "LC2:Dead", "outage") { WallA1Ratio = 0.12345 });
        }

        var lines = text.ToString().Split('\n', StringSplitOptions.RemoveEmptyEntries);
        Assert.Equal(TruthCsvWriter.Header, lines[0]);
        Assert.Equal("2026-06-21T09:00:00.000Z,brackenford,S1,1234.6,5.432,0.0100,90.0,discharging,-40.00,120.0,0.1235,500.00,300.00,LC2:Dead,outage", lines[1]);
    }

    [Fact]
    public void OnlyTheFloorShareReachesTheCellsOfAFloorOnlySilo()
    {
        var scenario = new ScenarioBuilder().WithFill("C1", 90).Build();
        var model = TestPlant.Model(scenario);
        model.Step();
        var c1 = model.Silos.Single(s => s.Options.Id == "C1");
        Assert.Equal(WeighingArrangement.FloorOnly, c1.Options.Weighing.Arrangement);
        var cellsKn = c1.SupportLoadsKn(new AmbientState(10, double.NaN, 0, 0, 0)).Sum();
        var structureKn = c1.Options.Weighing.StructureMassKg * SolidParameters.StandardGravity / 1000;

        // Reference: Janssen's closed form with the heap as surcharge, p_v(H) = γ·z0·(1 − e^(−H/z0)) + q0·e^(−H/z0)
        // [D/Janssen 1895], on the transition area, plus the weight of the hopper's contents.
        var shape = c1.Shape;
        var solid = c1.Solid;
        var surface = shape.SurfaceFor(c1.MassKg / solid.DensityKgM3);
        var z0 = shape.HydraulicRadiusM / (solid.K * solid.WallFriction);
        var h = surface.ContactHeightM;
        var q0 = solid.UnitWeightKnM3 * surface.HeapHeightM / 3;
        var pv = (solid.UnitWeightKnM3 * z0 * (1 - Math.Exp(-h / z0))) + (q0 * Math.Exp(-h / z0));
        var expected = (shape.AreaM2 * pv) + (solid.UnitWeightKnM3 * shape.HopperVolumeM3) + structureKn;
        Assert.Equal(expected, cellsKn, expected * 1e-6);

        // A slender cement silo (H/z0 ≈ 3) hangs most of its vertical section's contents on the wall.
        var contentsKn = c1.MassKg * SolidParameters.StandardGravity / 1000;
        Assert.InRange((cellsKn - structureKn) / contentsKn, 0.3, 0.6);
    }

    [Fact]
    public void AboveRealTimeEveryTickIsOneSamplePeriodOfSimulatedTimeFromTheStart()
    {
        var scenario = new ScenarioBuilder().Lasting(TimeSpan.FromSeconds(30)).WithFill("S1", 40).Build();
        var start = new DateTimeOffset(2026, 11, 30, 23, 59, 50, TimeSpan.Zero);
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario, start: start));
        Assert.Equal(31, run.Ticks.Count);
        for (var k = 0; k < run.Ticks.Count; k++)
        {
            Assert.Equal(start + TimeSpan.FromSeconds(k), run.Ticks[k].Time);
            Assert.All(run.Ticks[k].Messages, m => Assert.Equal(start + TimeSpan.FromSeconds(k), m.Message.Timestamp));
        }
    }
}
