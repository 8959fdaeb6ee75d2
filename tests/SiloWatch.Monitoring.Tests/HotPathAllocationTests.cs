using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests;

/// <summary>
/// <see cref="SiloMonitor.OnSample"/> is the hot path and allocates nothing (bytes counted on this thread,
/// not time: the cost is measured by the InventoryBenchmarks benchmark).
/// </summary>
public sealed class HotPathAllocationTests
{
    [Theory]
    [InlineData("S1", false)]
    [InlineData("S2", false)]
    [InlineData("C1", false)]
    [InlineData("C1", true)]
    public void UpdatingTheEstimateAllocatesNothingAtAnyFill(string siloId, bool ringSilent)
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor(siloId);
        var source = new SignalSource(silo, model);
        if (ringSilent)
        {
            foreach (var s in silo.Sensors.Where(s => s.Options.Kind == SensorKind.AxialStrain))
            {
                source.Silent.Add(s.Id);
            }
        }

        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 20, _ => 0);
        monitor.Tare("commissioning", t);
        // Empty, in the hopper, across the transition, the vertical section, near full: every branch of the inversion.
        foreach (var fill in new[] { 0.0, 0.002, 0.02, 0.05, 0.3, 0.6, 0.95 })
        {
            var samples = source.Samples(fill * model.CapacityKg, t + 1000, 30);
            t += 30_000;
            foreach (var sample in samples.AsSpan(0, samples.Length / 2))
            {
                monitor.OnSample(sample); // the filter and the detectors settle at the new fill
            }

            var before = GC.GetAllocatedBytesForCurrentThread();
            foreach (var sample in samples.AsSpan(samples.Length / 2))
            {
                monitor.OnSample(sample);
            }

            var allocated = GC.GetAllocatedBytesForCurrentThread() - before;
            Assert.True(allocated == 0, $"{siloId} at {fill:P1} of capacity: {allocated} bytes over {samples.Length - (samples.Length / 2)} samples");
            Assert.True(double.IsFinite(monitor.Evaluate(t).MassKg), $"{siloId} at {fill:P1}: no estimate");
        }
    }
}
