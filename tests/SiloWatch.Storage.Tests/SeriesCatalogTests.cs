using SiloWatch.Storage.Tests.Support;

namespace SiloWatch.Storage.Tests;

public sealed class SeriesCatalogTests
{
    [Fact]
    public void EverySensorOfTheDemoPlantHasASeriesTaggedWithSiteSiloSensorAndKind()
    {
        var registry = Some.DemoPlant();
        var catalog = new SeriesCatalog(registry);

        foreach (var silo in registry.Silos)
        {
            foreach (var sensor in silo.Sensors)
            {
                var key = catalog.Sensor(silo.Index, sensor.Index);
                Assert.Equal(Measurements.Sensor, key.Measurement);
                Assert.Equal(silo.SiteId, key.GetTag(Tags.Site));
                Assert.Equal(silo.SiloId, key.GetTag(Tags.Silo));
                Assert.Equal(sensor.Id, key.GetTag(Tags.Sensor));
                Assert.Equal(sensor.Options.Kind.ToString(), key.GetTag(Tags.Kind));
                Assert.Equal(SensorFields.All, key.FieldNames);
            }

            Assert.Equal(SiloEstimateFields.All, catalog.Estimate(silo.Index).FieldNames);
            Assert.Same(catalog.Estimate(silo.Index), catalog.Estimate(silo.Index));
        }

        var ringed = registry.Silos.SelectMany(s => s.Sensors.Where(x => x.Options.Ring.Length > 0).Select(x => (s, x.Options.Ring))).ToList();
        Assert.NotEmpty(ringed);
        foreach (var (silo, ring) in ringed)
        {
            Assert.True(catalog.TryGetRing(silo.Index, ring, out var key));
            Assert.Equal(ring, key.GetTag(Tags.Ring));
        }

        Assert.Equal(AlarmFields.All, catalog.Alarms("brackenford").FieldNames);
    }
}
