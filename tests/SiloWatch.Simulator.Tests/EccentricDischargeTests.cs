using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Simulator.Tests;

public sealed class EccentricDischargeTests(ITestOutputHelper output)
{
    private static readonly string[] S1Axial = ["SG-R1-000", "SG-R1-060", "SG-R1-120", "SG-R1-180", "SG-R1-240", "SG-R1-300"];
    private static readonly string[] S1Hoop = ["SG-R2-000", "SG-R2-060", "SG-R2-120", "SG-R2-180", "SG-R2-240", "SG-R2-300"];
    private static readonly double[] Angles = [0, 60, 120, 180, 240, 300];

    [Theory]
    [InlineData(120.0)]
    [InlineData(250.0)]
    [InlineData(15.0)]
    public void TheAxialRingsFirstHarmonicPointsAtTheFlowChannel(double channelDeg)
    {
        var (before, during) = RunDischarge("S1", channelDeg, S1Axial, BridgeInverse.QuarterMicro, 2.1);
        var delta = during.Zip(before, (a, b) => a - b).ToArray();
        var (a0, a1, phase) = RingFit.FirstHarmonic(Angles, delta);
        output.WriteLine($"axial Δε: A0 = {a0:F1} µε, A1 = {a1:F1} µε at {phase:F1}° (channel {channelDeg}°)");

        // Less friction is carried down the wall inside the channel (lower pressure), so the wall there is
        // less compressed: Δε is highest at the channel. 6 gauges 60° apart place a harmonic to within a few degrees.
        Assert.True(a1 > 5, $"first harmonic {a1:F1} µε is too weak to be a pattern");
        Assert.True(RingFit.AngleBetween(phase, channelDeg) < 10, $"n = 1 at {phase:F1}°, channel at {channelDeg}°");
    }

    [Fact]
    public void TheHoopRingsFirstHarmonicPointsAwayFromTheChannelWherePressureFalls()
    {
        const double channelDeg = 120;
        var (before, during) = RunDischarge("S1", channelDeg, S1Hoop, BridgeInverse.QuarterMicro, 2.1);
        var delta = during.Zip(before, (a, b) => a - b).ToArray();
        var (a0, a1, phase) = RingFit.FirstHarmonic(Angles, delta);
        output.WriteLine($"hoop Δε: A0 = {a0:F1} µε, A1 = {a1:F1} µε at {phase:F1}°; per gauge {string.Join(", ", delta.Select(d => d.ToString("F1", System.Globalization.CultureInfo.InvariantCulture)))}");
        // EN's zones balance the pressure locally (p_hae beside makes up for p_hce inside), so n = 1 is a small
        // part of the hoop pattern; it is still well above the 0.3 µε noise.
        Assert.True(a1 > 1, $"first harmonic {a1:F1} µε is too weak to be a pattern");
        Assert.True(RingFit.AngleBetween(phase, channelDeg + 180) < 10, $"n = 1 at {phase:F1}°, expected opposite the channel at {channelDeg}°");
        // Inside the channel the hoop strain falls below its value before the discharge began.
        Assert.True(delta[2] < 0, $"Δε at the channel gauge = {delta[2]:F1} µε");
    }

    [Fact]
    public void AConcreteSilosFullBridgeRingShowsTheChannelToo()
    {
        string[] ring = ["SG-R1-000", "SG-R1-060", "SG-R1-120", "SG-R1-180", "SG-R1-240", "SG-R1-300"];
        var (before, during) = RunDischarge("C1", 300, ring, BridgeInverse.FullMicro, 2.0);
        var delta = during.Zip(before, (a, b) => a - b).ToArray();
        var (_, _, phase) = RingFit.FirstHarmonic(Angles, delta);
        Assert.True(RingFit.AngleBetween(phase, 300) < 10, $"n = 1 at {phase:F1}°");
    }

    [Fact]
    public void ACentralDischargeRaisesTheRingEvenlyWithoutAFirstHarmonic()
    {
        var (before, during) = RunDischarge("S1", null, S1Hoop, BridgeInverse.QuarterMicro, 2.1);
        var delta = during.Zip(before, (a, b) => a - b).ToArray();
        var (a0, a1, _) = RingFit.FirstHarmonic(Angles, delta);
        Assert.True(a0 > 1, $"discharge overpressure should raise the mean hoop strain, A0 = {a0:F2} µε");
        Assert.True(a1 < 0.3 * a0, $"A1 = {a1:F2} µε for A0 = {a0:F2} µε");
    }

    [Fact]
    public void TheTruthNamesTheChannelAndTheDischarge()
    {
        var scenario = Build("S1", 120);
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario));
        var rows = run.Ticks.SelectMany(t => t.Truth).Where(r => r.Silo == "S1").ToList();
        Assert.Contains(rows, r => r.Flow == Model.FlowState.Discharging && r.ChannelAzimuthDeg == 120);
        Assert.All(rows.Where(r => r.Flow == Model.FlowState.Idle), r => Assert.Null(r.ChannelAzimuthDeg));
    }

    private static Scenario Build(string silo, double? channelDeg) => new ScenarioBuilder()
        .Lasting(TimeSpan.FromMinutes(5))
        .WithFill(silo, 85)
        .WithNoise(strainMicro: 0.3)
        .With(new ScenarioEvent { At = TimeSpan.FromMinutes(2), Type = ScenarioEventType.Discharge, Silo = silo, MassKg = 60000, RateKgPerS = 40, ChannelAzimuthDeg = channelDeg })
        .Build();

    /// <summary>Ring strains (from the published mV/V) just before the discharge and 2½ minutes into it.</summary>
    private static (double[] Before, double[] During) RunDischarge(string silo, double? channelDeg, string[] ring, Func<double, double, double> toMicro, double gf)
    {
        var scenario = Build(silo, channelDeg);
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario));
        var start = scenario.Start!.Value;
        var before = run.Snapshot(silo, ring, start + TimeSpan.FromSeconds(115)).Select(v => toMicro(v, gf)).ToArray();
        var during = run.Snapshot(silo, ring, start + TimeSpan.FromSeconds(270)).Select(v => toMicro(v, gf)).ToArray();
        return (before, during);
    }
}
