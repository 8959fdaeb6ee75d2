using SiloWatch.Monitoring;

namespace SiloWatch.Monitoring.Tests.Wall.Support;

/// <summary>Inventory estimates with a chosen mass, rate and rate interval (invented values for tests).</summary>
public static class Inventory
{
    public static InventoryEstimate At(long nowMs, double massKg, double rateKgPerS, double rateHalfWidthKgPerS = 0.5,
        double percentFull = 50, Quality quality = Quality.Good) =>
        new("brackenford", "S1", nowMs, massKg, massKg - 500, massKg + 500, double.NaN, double.NaN, double.NaN, double.NaN, percentFull,
            rateKgPerS, rateKgPerS - rateHalfWidthKgPerS, rateKgPerS + rateHalfWidthKgPerS, null, null, quality, "", "all-supports");
}
