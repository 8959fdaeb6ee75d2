using System.Text.Json;
using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Monitoring.Tests.Wall.Support;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests.Wall;

public sealed class WallWatchTests
{
    private static double AngleBetween(double a, double b)
    {
        var d = Math.Abs(a - b) % 360;
        return d > 180 ? 360 - d : d;
    }

    /// <summary>Idle with the sun going round, so each gauge's residual thermal sensitivity is learned.</summary>
    private static void IdleSunnyHours(WallScenario s, int hours)
    {
        var start = s.NowMs;
        s.Run(hours * 3600, _ =>
        {
            var hour = (s.NowMs - start) / 3_600_000.0;
            var day = hour % 24;
            s.SunAzimuthDeg = 90 + (180 * Math.Clamp((day - 6) / 12, 0, 1));
            s.SunExcessK = day is > 6 and < 18 ? 18 * Math.Sin(Math.PI * (day - 6) / 12) : 0;
            s.AirTemperatureC = 12 + (6 * Math.Sin(Math.PI * (day - 9) / 12));
        });
    }

    [Fact]
    public void SolarHeatingWithNoDischargeRaisesNothing()
    {
        // DOMAIN.md §3 [D]: sun on one side shows as n = 1 in the gauge temperatures and strains; not an eccentric discharge.
        var s = new WallScenario { ResidualMicroPerK = 5 };
        var maxStrainA1 = 0.0;
        var start = s.NowMs;
        s.Run(6 * 3600, i =>
        {
            var hour = (s.NowMs - start) / 3_600_000.0;
            s.SunAzimuthDeg = 90 + (15 * hour);
            s.SunExcessK = 18 * Math.Sin(Math.PI * hour / 6);
            if (i % 600 == 0 && s.Last is { } last)
            {
                maxStrainA1 = Math.Max(maxStrainA1, last.Rings.Single(r => r.Ring == "R1").StrainMicro[1].Amplitude);
            }
        });

        Assert.DoesNotContain(s.Transitions, t => t.To == AlarmStateName.Unacknowledged);
        Assert.All(s.Assessments, a => Assert.Equal(DischargeState.Idle, a.State));
        // The sun did put a real first harmonic on the ring (≈ 5 µε/K × 18 K × ½), so the test is not vacuous.
        Assert.True(maxStrainA1 > 30, $"solar n = 1 on the ring was only {maxStrainA1:0.0} µε");
        Assert.Equal(AlarmStateName.SuppressedByDesign, s.Engine.Get("brackenford/S1/asymmetry-a1-R1").State);
    }

    [Fact]
    public void SunComingOutDuringAConcentricDischargeIsCorrectedByTheLearnedThermalSensitivity()
    {
        var s = new WallScenario { ResidualMicroPerK = 5 };
        IdleSunnyHours(s, 14);
        Assert.True(s.Last!.ThermalLearned);
        Assert.All(s.Watch.Snapshot(s.NowMs).Gauges, g => Assert.Equal(5, g.ThermalResidualMicroPerK, 0.5));

        // Overcast morning, discharge starts, then the cloud clears: +20 K on the east side within five minutes.
        s.SunExcessK = 0;
        s.SunAzimuthDeg = 100;
        s.Run(120);
        s.RateKgPerS = -30;
        s.Run(900, i => s.SunExcessK = Math.Min(20, Math.Max(0, (i - 120) * 20.0 / 300)));

        var a1 = s.Assessments.TakeLast(600).Select(a => a.Rings.Single(r => r.Ring == "R1").A1Ratio).ToArray();
        Assert.Equal(DischargeState.Discharging, s.Last!.State);
        Assert.Empty(s.Raised("asymmetry"));
        Assert.True(a1.Max() < 0.1, $"A1/A0 reached {a1.Max():0.000}");

        // Without the thermal correction the same sun would read as an asymmetry, far above the demo setpoint.
        var naive = new WallScenario(options: new WallWatchOptions { LearnThermalSensitivity = false }) { ResidualMicroPerK = 5 };
        naive.Run(120);
        naive.RateKgPerS = -30;
        naive.Run(900, i => naive.SunExcessK = Math.Min(20, Math.Max(0, (i - 120) * 20.0 / 300)));
        Assert.True(naive.Assessments.TakeLast(300).Max(a => a.Rings.Single(r => r.Ring == "R1").A1Ratio) > 3 * s.Silo.Options.AlarmLimits.AsymmetryRatioA1);
    }

    [Fact]
    public void AnEccentricDischargeRaisesTheAsymmetryAlarmWithTheRightDirection()
    {
        var s = new WallScenario { AsymmetryRatio = 0.6, AsymmetryDirectionDeg = 212 };
        s.Run(120);
        s.RateKgPerS = -30;
        s.Run(300);

        var raised = s.Raised("asymmetry-a1-R1").First();
        var ring = s.Ring("R1");
        Assert.Equal(DischargeState.Discharging, s.Last!.State);
        Assert.Equal(0.6, ring.A1Ratio, 1);
        Assert.True(AngleBetween(ring.AsymmetryDirectionDeg, 212) <= 15, $"direction {ring.AsymmetryDirectionDeg:0}°");
        Assert.Contains("toward 212°", raised.Message, StringComparison.Ordinal);
        Assert.Contains("Never enter the silo", raised.Message, StringComparison.Ordinal);
        Assert.NotEmpty(s.Raised("asymmetry-a1-R2"));
        Assert.True(AngleBetween(s.Ring("R2").AsymmetryDirectionDeg, 212) <= 15);
    }

    [Fact]
    public void AFinishedDischargeIsSummarisedOnceWithItsMassOutAndPeakAsymmetry()
    {
        var s = new WallScenario { AsymmetryRatio = 0.6, AsymmetryDirectionDeg = 140 };
        s.Run(120);
        var start = s.MassKg;
        s.RateKgPerS = -30;
        s.Run(300);
        s.RateKgPerS = 0;
        s.Run(200);

        var summary = Assert.Single(s.Assessments, a => a.FinishedDischarge is not null).FinishedDischarge!;
        Assert.Equal(DischargeState.Idle, s.Last!.State);
        Assert.Equal(30 * 300, start - summary.MassAtEndKg, 30.0 * 20);       // onset taken before the confirmation
        Assert.Equal(-30, summary.MeanRateKgPerS, 3.0);
        var r1 = summary.Rings.Single(r => r.Ring == "R1");
        Assert.Equal(0.6, r1.MaxA1Ratio, 1);
        Assert.True(AngleBetween(r1.DirectionAtMaxDeg, 140) <= 15);
        // The latched asymmetry alarm outlives the discharge until a person resets it.
        Assert.Equal(AlarmStateName.Latched, s.Engine.Get("brackenford/S1/asymmetry-a1-R1").State);
        Assert.NotNull(s.Engine.Reset("brackenford/S1/asymmetry-a1-R1", "shift.lead"));
    }

    [Fact]
    public void AConcentricDischargeRaisesNoAlarmAndMeetsItsExpectedLoad()
    {
        var s = new WallScenario();
        s.Run(120);
        s.RateKgPerS = -30;
        s.Run(600);

        Assert.DoesNotContain(s.Transitions, t => t.To == AlarmStateName.Unacknowledged);
        var ring = s.Ring("R1");
        Assert.True(ring.A1Ratio < 0.05, $"A1/A0 {ring.A1Ratio:0.000}");
        // Baseline at the expected filling load plus the measured change = the expected discharge load (C_w, C_h) [D].
        Assert.Equal(1.0, ring.MeasuredOverExpected, 1);
        Assert.Equal(1.0, ring.PeakOverMean, 1);
        Assert.NotNull(s.Last!.DischargeOnsetMs);
    }

    [Fact]
    public void AFailedGaugeLeavesTheRingAssessedOnTheOthersAndRaisesItsSensorAlarm()
    {
        var s = new WallScenario { AsymmetryRatio = 0.6, AsymmetryDirectionDeg = 75 };
        s.BadSensors.Add("SG-R1-060");
        s.Run(120);
        s.RateKgPerS = -30;
        s.Run(200);

        var ring = s.Ring("R1");
        Assert.Equal(5, ring.GoodGauges);
        Assert.Equal(2, ring.ResolvedOrder);
        Assert.Contains("1 of 6 gauges not usable", ring.Note, StringComparison.Ordinal);
        Assert.True(AngleBetween(ring.AsymmetryDirectionDeg, 75) <= 15, $"direction {ring.AsymmetryDirectionDeg:0}°");
        Assert.NotEmpty(s.Raised("asymmetry-a1-R1"));
        var fault = Assert.Single(s.Raised("sensor-bad-SG-R1-060"));
        Assert.InRange(fault.TimestampMs - DemoPlant.Start.ToUnixTimeMilliseconds(), 60_000, 63_000); // bad from the first second, 60 s on-delay
    }

    [Fact]
    public void AnUncertainGaugeIsLeftOutSoItsUncompensatedJumpRaisesNoAsymmetry()
    {
        // A gauge whose paired temperature went missing is uncompensated: it jumps by its thermal output × (T − T_ref).
        var s = new WallScenario();
        s.Run(120);
        s.RateKgPerS = -30;
        s.Run(60);
        s.UncertainSensors["SG-R1-120"] = 1.5 * (15 - 20) * 4; // a large jump, to make the point
        s.Run(60);

        Assert.Equal(5, s.Ring("R1").GoodGauges);
        Assert.True(s.Ring("R1").A1Ratio < 0.05);
        Assert.Empty(s.Raised("asymmetry"));
    }

    [Fact]
    public void RingForcesAtTheExpectedStrainAreTheModelsMembraneForces()
    {
        // Round trip against Mechanics: its strains come from n_z and p_h·r by biaxial Hooke; ours go back with MembraneForces [D].
        var s = new WallScenario { ResidualMicroPerK = 0, NoiseMicro = 0 };
        s.Run(3);
        var ring = s.Ring("R1");
        var wall = s.Model.WallAt(s.Model.StateAtMass(s.MassKg), ring.HeightM);
        Assert.Equal(wall.AxialForceKnPerM, ring.ForceKnPerM[0].Amplitude, 6);
        var hoop = s.Ring("R2");
        Assert.Equal(s.Model.WallAt(s.Model.StateAtMass(s.MassKg), hoop.HeightM).HoopForceKnPerM, hoop.ForceKnPerM[0].Amplitude, 6);
    }

    [Fact]
    public void TheEstimatesFirstMinuteIsNotJudgedAsAnIdleMassChange()
    {
        // The inventory filter converges after a start: a step within the first window of estimates is its start-up.
        var s = new WallScenario();
        s.Run(10);
        s.Run(150, i =>
        {
            if (i == 0)
            {
                s.MassKg -= 3000;
            }
        });
        Assert.Equal(DischargeState.Idle, s.Last!.State);
        Assert.Empty(s.Raised("idle-mass-change"));
    }

    [Fact]
    public void AMassStepWhileIdleRaisesTheIdleChangeAlarmAndOverfillItsOwn()
    {
        var s = new WallScenario();
        s.Run(90);
        s.Run(40, i =>
        {
            if (i == 0)
            {
                s.MassKg -= 3000; // a hang-up letting go, or a cell jump: the estimate steps, no rate
            }
        });
        Assert.Single(s.Raised("idle-mass-change"));

        var full = new WallScenario();
        full.MassKg = 0.97 * full.Model.CapacityKg;
        full.Run(20);
        Assert.Single(full.Raised("overfill"));
        Assert.Empty(full.Raised("support-overload"));
    }

    [Fact]
    public void ASupportAboveItsShareOfCapacityIsReportedInPercent()
    {
        var silo = DemoPlant.Silo("S1");
        var watch = new WallWatch(silo, DemoPlant.Model("S1"), new WallWatchOptions());
        var lc2 = silo.Sensors.Single(x => x.Id == "LC2").Index;
        foreach (var cell in silo.Sensors.Where(x => x.Options.Kind == SensorKind.LoadCell))
        {
            watch.OnLoadCell(cell.Index, 1000, cell.Index == lc2 ? 2400 : 1000, Quality.Good);
        }

        var a = watch.Evaluate(1000, Inventory.At(1000, 200_000, 0));
        var overload = a.Conditions.Single(c => c.Condition == ConditionKeys.SupportOverload("S1"));
        Assert.Equal(2400.0 / 2500 * 100, overload.Value, 9);
    }

    [Fact]
    public void ARestartMidDischargeResumesAgainstTheOriginalBaseline()
    {
        var s = new WallScenario { AsymmetryRatio = 0.5, AsymmetryDirectionDeg = 300 };
        s.Run(120);
        s.RateKgPerS = -30;
        s.Run(60);
        var json = JsonSerializer.Serialize(s.Watch.Snapshot(s.NowMs));
        var restored = new WallWatch(s.Silo, s.Model, s.Options);
        Assert.Empty(restored.Restore(JsonSerializer.Deserialize<WallSnapshot>(json)!));

        // Feed the restored watch what the gauges would show a little later in the same discharge.
        WallAssessment? last = null;
        s.Run(5);
        for (var i = 0; i < 3; i++)
        {
            var now = s.NowMs + (i * 1000);
            foreach (var g in s.Model.Gauges)
            {
                var sign = g.Kind == SensorKind.AxialStrain ? -1.0 : 1.0;
                var expected = new double[s.Model.Gauges.Count];
                s.Model.ExpectedStrains(s.Model.StateAtMass(s.MassKg, FlowMode.Discharging), expected);
                var mean = Math.Abs(s.Model.Gauges.Where(x => x.Ring == g.Ring).Average(x => expected[x.Index]));
                var strain = expected[g.Index] + (sign * 0.5 * mean * Math.Cos((g.AngleDeg - 300) * Math.PI / 180)) + (3 * (15 - 20));
                restored.OnGauge(g.SensorIndex, now, strain, 15, Quality.Good);
            }

            last = restored.Evaluate(now, Inventory.At(now, s.MassKg, -30));
        }

        Assert.Equal(DischargeState.Discharging, last!.State);
        var r1 = last.Rings.Single(r => r.Ring == "R1");
        Assert.Equal(0.5, r1.A1Ratio, 1);
        Assert.True(AngleBetween(r1.AsymmetryDirectionDeg, 300) <= 15);
    }
}
