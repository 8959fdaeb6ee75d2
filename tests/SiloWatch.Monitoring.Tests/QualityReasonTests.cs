using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

/// <summary>Reason texts belong to the arrangement they describe: none leaks into another silo's estimate.</summary>
public sealed class QualityReasonTests
{
    private static InventoryEstimate Run(string siloId, double fraction, bool ringSilent)
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor(siloId);
        var source = new SignalSource(silo, model) { EccentricityM = 0.1 };
        if (ringSilent)
        {
            foreach (var s in silo.Sensors.Where(s => s.Options.Kind == Plant.SensorKind.AxialStrain))
            {
                source.Silent.Add(s.Id);
            }
        }

        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 60, _ => fraction * model.CapacityKg);
        return monitor.Evaluate(t);
    }

    [Fact]
    public void APartiallyWeighedSiloWithAWideIntervalSaysSoWithoutNamingTheFloorLoadInversion()
    {
        // S2: one of three legs weighed, no ring: the unmeasured offset makes σ more than 5 % of capacity at 90 % full.
        var e = Run("S2", 0.9, ringSilent: true);

        Assert.Equal("some-supports", e.Method);
        Assert.True((e.MassHigh95Kg - e.MassLow95Kg) / 2 / 1.96 > 0.05 * DemoPlant.Model("S2").CapacityKg, "the case must have a wide interval");
        Assert.Contains("wide uncertainty", e.QualityReason, StringComparison.Ordinal);
        Assert.DoesNotContain("floor", e.QualityReason, StringComparison.Ordinal);
        Assert.DoesNotContain("conditioned", e.QualityReason, StringComparison.Ordinal);
        Assert.DoesNotContain("wall ring", e.QualityReason, StringComparison.Ordinal);
    }

    [Fact]
    public void AFloorWeighedSiloNearSaturationStillSaysItsInversionIsPoorlyConditioned()
    {
        var e = Run("C1", 0.9, ringSilent: true);

        Assert.Equal("floor-janssen", e.Method);
        Assert.Contains("floor-load inversion poorly conditioned", e.QualityReason, StringComparison.Ordinal);
        Assert.Contains("wall ring unavailable", e.QualityReason, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("S1")]
    [InlineData("F1")]
    [InlineData("S2")]
    public void SupportWeighedSilosNeverCarryFloorWeighingReasons(string siloId)
    {
        foreach (var fraction in new[] { 0.1, 0.5, 0.95 })
        {
            foreach (var silent in new[] { false, true })
            {
                var e = Run(siloId, fraction, silent);
                Assert.True(double.IsFinite(e.MassKg), $"{siloId} at {fraction:P0}: no estimate");
                Assert.DoesNotContain("floor-load", e.QualityReason, StringComparison.Ordinal);
                Assert.DoesNotContain("wall ring", e.QualityReason, StringComparison.Ordinal);
                Assert.DoesNotContain("of floor load", e.QualityReason, StringComparison.Ordinal);
            }
        }
    }
}
