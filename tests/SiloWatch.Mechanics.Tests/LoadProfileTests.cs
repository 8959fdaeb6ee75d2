using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class LoadProfileTests
{
    private static SiloModel DemoSilo(string id)
    {
        var library = TestSilos.Library();
        var (plant, _) = PlantLoader.LoadFile(TestSilos.ConfigPath("plant.demo.json"), library.Names);
        var silo = plant.Sites.SelectMany(s => s.Silos).Single(s => s.Id == id);
        return SiloModel.Create(silo, library.Get(silo.Material));
    }

    [Fact]
    public void TheProfileRunsFromTheTopOfTheFillToTheTransitionWithEveryQuantityFromItsClause()
    {
        var model = DemoSilo("S1");
        var profile = LoadProfile.Build(model, model.StateAtMass(model.CapacityKg), 1.0);
        Assert.Equal(model.Geometry.WallHeightM, profile.EquivalentSurfaceAboveTransitionM, 9); // capacity: equivalent surface at the eaves
        Assert.Equal(19, profile.Rows.Count);
        Assert.Equal(0.0, profile.Rows[^1].HeightAboveTransitionM);
        foreach (var row in profile.Rows)
        {
            var expected = model.CharacteristicAt(row.DepthBelowEquivalentSurfaceM);
            Assert.Equal(expected, row.Characteristic);
            Assert.Equal(model.DischargePatchAt(row.DepthBelowEquivalentSurfaceM).PressureKPa, row.DischargePatchKPa);
            Assert.True(row.ExpectedDischarge.HorizontalKPa >= row.ExpectedFilling.HorizontalKPa);
        }

        Assert.True(profile.HopperRows.Count > 0);
        Assert.Equal(profile.Loads.TransitionVerticalKPa, profile.HopperRows[0].VerticalKPa, 9);
    }

    [Fact]
    public void RingsGroupTheirGaugesAndCarryTheExpectedStrain()
    {
        var model = DemoSilo("S1");
        var state = model.StateAtMass(model.CapacityKg);
        var profile = LoadProfile.Build(model, state);
        Assert.Equal(["R1", "R2"], profile.Rings.Select(r => r.Ring));
        Assert.All(profile.Rings, r => Assert.Equal(6, r.GaugeCount));
        var strains = new double[model.Gauges.Count];
        model.ExpectedStrains(state with { Flow = FlowMode.Discharging }, strains);
        Assert.Equal(strains[model.Gauges.First(g => g.Ring == "R2").Index], profile.Rings[1].DischargeStrainMicro);
    }

    [Fact]
    public void CasesTheStandardsMethodDoesNotCoverAreNotedNotFilled()
    {
        var bin = DemoSilo("F1");
        var squareProfile = LoadProfile.Build(bin, bin.StateAtMass(bin.CapacityKg));
        Assert.All(squareProfile.Rows, r => Assert.Null(r.DischargePatchKPa));
        Assert.Contains(squareProfile.Notes, n => n.Contains("Square section", StringComparison.Ordinal));

        var squat = SiloModel.Create(TestSilos.Circular(12, 8), TestSilos.Wheat());
        var squatProfile = LoadProfile.Build(squat, squat.StateAtLevel(8));
        Assert.All(squatProfile.Rows, r => Assert.Null(r.Characteristic));
        Assert.Contains(squatProfile.Notes, n => n.Contains("squat", StringComparison.Ordinal));
        Assert.True(squatProfile.Rows[^1].ExpectedFilling.VerticalKPa > 0, "the monitoring expectation is still given");
    }

    [Fact]
    public void TheCautionSaysMonitoringNotDesignAndNamesTheEngineer()
    {
        Assert.Contains("not a design check", LoadProfile.Caution, StringComparison.Ordinal);
        Assert.Contains("licensed structural engineer", LoadProfile.Caution, StringComparison.Ordinal);
        Assert.Contains("engineer of record decides", LoadProfile.Caution, StringComparison.Ordinal);
    }
}
