using SiloWatch.Simulator.Model;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class WindLoadTests
{
    private static readonly double[] Angles = [0, 60, 120, 180, 240, 300];

    [Fact]
    public void WindBendsTheShellTowardItAndOvalisesTheRing()
    {
        var model = TestPlant.Model(new ScenarioBuilder().WithFill("S1", 10).Build());
        model.Step();
        var s1 = model.Silos.Single(s => s.Options.Id == "S1");
        var calm = new AmbientState(10, double.NaN, 0, 0, 240);
        var windy = new AmbientState(10, double.NaN, 0, 25, 240);
        double[] Delta(Func<(double Axial, double Hoop), double> pick, double height) =>
            [.. Angles.Select(a => pick(s1.WallStrainMicro(height, a, windy)) - pick(s1.WallStrainMicro(height, a, calm)))];

        // Cantilever bending: the windward side (240°) is stretched, n = 1 points into the wind.
        var (_, a1, phase1) = RingFit.FirstHarmonic(Angles, Delta(e => e.Axial, 1.5));
        Assert.True(a1 > 1, $"A1 = {a1:F2} µε");
        Assert.True(RingFit.AngleBetween(phase1, 240) < 2, $"n = 1 at {phase1:F1}°");

        // Ovalisation: the ring flattens along the wind (outer fibre compressed at 240° and 60°), so the n = 2
        // maxima lie across it at 150° / 330°.
        var (a2, phase2) = RingFit.SecondHarmonic(Angles, Delta(e => e.Hoop, 6.0));
        Assert.True(a2 > 1, $"A2 = {a2:F2} µε");
        Assert.True(RingFit.AngleBetween(phase2, 150) < 2, $"n = 2 maximum at {phase2:F1}°");
    }
}
