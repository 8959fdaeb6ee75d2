using SiloWatch.Plant;

namespace SiloWatch.Plant.Tests;

public sealed class PlantDefinitionTests
{
    private static string DemoPath => Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json");

    [Fact]
    public void TheDemoPlantLoadsWithNoFindings()
    {
        var (plant, findings) = PlantLoader.LoadFile(DemoPath);

        Assert.Empty(findings);
        var site = Assert.Single(plant.Sites);
        Assert.Equal("brackenford", site.Id);
        Assert.Equal(4, site.Silos.Count);
        Assert.Contains(site.Silos, s => s.Weighing.Arrangement == WeighingArrangement.AllSupports);
        Assert.Contains(site.Silos, s => s.Weighing.Arrangement == WeighingArrangement.SomeSupports);
        Assert.Contains(site.Silos, s => s.Weighing.Arrangement == WeighingArrangement.FloorOnly);
    }

    [Fact]
    public void EveryFindingNamesSiteSiloSensorKeyAndValue()
    {
        var (plant, _) = PlantLoader.LoadFile(DemoPath);
        var silo = plant.Sites[0].Silos[0];
        silo.Sensors[1].CapacityKn = -5;
        silo.Sensors[1].Unit = "kN";

        var findings = PlantValidator.Validate(plant);

        var capacity = Assert.Single(findings, f => f.Key.EndsWith(":CapacityKn", StringComparison.Ordinal));
        Assert.Equal("brackenford", capacity.Site);
        Assert.Equal("S1", capacity.Silo);
        Assert.Equal("LC2", capacity.Sensor);
        Assert.Equal("Plant:Sites:0:Silos:0:Sensors:1:CapacityKn", capacity.Key);
        Assert.Equal("-5", capacity.Value);
        Assert.Contains("site 'brackenford' silo 'S1' sensor 'LC2'", capacity.ToString(), StringComparison.Ordinal);

        var unit = Assert.Single(findings, f => f.Key.EndsWith(":Unit", StringComparison.Ordinal));
        Assert.Equal("kN", unit.Value);
    }

    [Fact]
    public void AnOutletSignalIsAZeroOrOneStateWithoutTemperatureCompensation()
    {
        var (plant, _) = PlantLoader.LoadFile(DemoPath);
        var c1 = plant.Sites[0].Silos.Single(s => s.Id == "C1");
        var feeder = c1.Sensors.Single(s => s.Kind == SensorKind.Outlet);
        Assert.Equal(("FD1", "state", 0.0, 1.0), (feeder.Id, feeder.Unit, feeder.RangeMin, feeder.RangeMax));
        Assert.Equal(["state"], PlantValidator.AllowedUnits(SensorKind.Outlet));

        feeder.Unit = "mV/V";
        feeder.RangeMax = 24;
        feeder.TemperatureSensor = "T-R1-000";
        var findings = PlantValidator.Validate(plant);

        Assert.Equal(3, findings.Count);
        Assert.All(findings, f => Assert.Equal(("C1", "FD1"), (f.Silo, f.Sensor)));
        Assert.Contains(findings, f => f.Key.EndsWith(":Unit", StringComparison.Ordinal) && f.Value == "mV/V");
        Assert.Contains(findings, f => f.Key.EndsWith(":RangeMin/RangeMax", StringComparison.Ordinal) && f.Value == "0..24");
        Assert.Contains(findings, f => f.Key.EndsWith(":TemperatureSensor", StringComparison.Ordinal));
    }

    [Fact]
    public void AnUnknownMaterialIsReportedWhenTheLibraryIsGiven()
    {
        var (plant, _) = PlantLoader.LoadFile(DemoPath);

        var findings = PlantValidator.Validate(plant, new HashSet<string> { "wheat", "maize", "cement" });

        var f = Assert.Single(findings);
        Assert.Equal("F1", f.Silo);
        Assert.Equal("fly-ash", f.Value);
    }

    [Fact]
    public void GaugesOfOneRingMustShareItsHeightAndKind()
    {
        var (plant, _) = PlantLoader.LoadFile(DemoPath);
        var gauges = plant.Sites[0].Silos[0].Sensors.Where(s => s.Ring == "R1").ToList();
        gauges[2].HeightM = 3.0;
        gauges[3].Kind = SensorKind.HoopStrain;

        var findings = PlantValidator.Validate(plant);

        Assert.Contains(findings, f => f.Sensor == gauges[2].Id && f.Key.EndsWith(":HeightM", StringComparison.Ordinal) && f.Value == "3");
        Assert.Contains(findings, f => f.Sensor == gauges[3].Id && f.Key.EndsWith(":Kind", StringComparison.Ordinal));
    }

    [Fact]
    public void AnUnknownKeyInTheFileIsAFindingNotSilentlyIgnored()
    {
        var path = Path.GetTempFileName();
        try
        {
            File.WriteAllText(path, """{ "Plant": { "Sites": [ { "Id": "a", "Silos": [ { "Id": "S1", "Diameter": 4 } ] } ] } }""");

            var (_, findings) = PlantLoader.LoadFile(path);

            var f = Assert.Single(findings);
            Assert.Contains("Diameter", f.Problem, StringComparison.Ordinal);
        }
        finally
        {
            File.Delete(path);
        }
    }

    [Fact]
    public void TheRegistryFindsSilosAndSensorsBySpan()
    {
        var (plant, _) = PlantLoader.LoadFile(DemoPath);
        var registry = new PlantRegistry(plant);

        Assert.True(registry.TryGetSilo("brackenford/C1".AsSpan(), out var silo));
        Assert.True(silo.TryGetSensor("LC3".AsSpan(), out var cell));
        Assert.Equal(SensorKind.LoadCell, cell.Options.Kind);
        Assert.False(silo.TryGetSensor("LC9".AsSpan(), out _));
        Assert.False(registry.TryGetSilo("brackenford/none".AsSpan(), out _));
    }
}
