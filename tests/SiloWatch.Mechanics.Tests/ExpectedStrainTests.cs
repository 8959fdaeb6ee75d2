using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class ExpectedStrainTests
{
    private static SiloModel Ringed()
    {
        var silo = TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5);
        TestSilos.WithGaugeRing(silo, "R1", SensorKind.AxialStrain, 1.5, 6);
        TestSilos.WithGaugeRing(silo, "R2", SensorKind.HoopStrain, 6.0, 6);
        return SiloModel.Create(silo, TestSilos.Wheat());
    }

    [Theory]
    [InlineData(FlowMode.Filling)]
    [InlineData(FlowMode.Discharging)]
    public void GaugeStrainsFollowBiaxialHookeOnTheMembraneForces(FlowMode flow)
    {
        var model = Ringed();
        var state = model.StateAtLevel(model.Geometry.MaxLevelM, flow);
        var strains = new double[model.Gauges.Count];
        model.ExpectedStrains(state, strains);
        const double t = 0.008, eGPa = 200, nu = 0.3, r = 3.0;
        foreach (var gauge in model.Gauges)
        {
            var wall = model.WallAt(state, gauge.HeightAboveTransitionM);
            // σ = n/t, compression negative; ε_z = (σ_z − νσ_θ)/E, ε_θ = (σ_θ − νσ_z)/E [D, Hooke];
            // n_θ = p_h·r (thin circular shell membrane).
            var sz = -wall.AxialForceKnPerM / t;
            var st = wall.HorizontalKPa * r / t;
            Assert.Equal(wall.HorizontalKPa * r, wall.HoopForceKnPerM, 9);
            var expected = gauge.Kind == SensorKind.AxialStrain ? (sz - (nu * st)) / eGPa : (st - (nu * sz)) / eGPa;
            Assert.Equal(expected, strains[gauge.Index], 9);
            Assert.True(gauge.IsModelled);
        }

        Assert.True(strains[0] < 0, "axial strain under wall friction is compressive");
        Assert.True(strains[6] > 0, "hoop strain under pressure is tensile");
    }

    [Fact]
    public void StrainsRiseWithTheFillAndAreZeroAboveTheSurface()
    {
        var model = Ringed();
        var strains = new double[model.Gauges.Count];
        model.ExpectedStrains(model.StateAtLevel(model.Geometry.HopperHeightM + 4.0), strains);
        Assert.Equal(0.0, strains[6]); // hoop ring at 6 m, surface contact at 4 m
        Assert.True(strains[0] < 0);
        var previous = 0.0;
        for (var level = model.Geometry.HopperHeightM + 2; level <= model.Geometry.MaxLevelM; level += 2)
        {
            model.ExpectedStrains(model.StateAtMass(model.MassAtLevelKg(level)), strains);
            Assert.True(strains[0] < previous);
            previous = strains[0];
        }
    }

    [Fact]
    public void GaugesTheModelCannotPredictAreFlaggedNotGuessed()
    {
        var bin = TestSilos.WithGaugeRing(TestSilos.Square(4, 10), "R1", SensorKind.HoopStrain, 2, 4);
        var model = SiloModel.Create(bin, TestSilos.Wheat());
        Assert.All(model.Gauges, g => Assert.False(g.IsModelled));
        Assert.All(model.Gauges, g => Assert.Contains("circular", g.NotModelledReason, StringComparison.Ordinal));
        var strains = new double[4];
        model.ExpectedStrains(model.StateAtLevel(8), strains);
        Assert.All(strains, s => Assert.True(double.IsNaN(s)));
    }

    [Fact]
    public void TheDemoPlantBuildsAModelForEverySilo()
    {
        var library = TestSilos.Library();
        var (plant, findings) = PlantLoader.LoadFile(TestSilos.ConfigPath("plant.demo.json"), library.Names);
        Assert.Empty(findings);
        foreach (var silo in plant.Sites.SelectMany(s => s.Silos))
        {
            var model = SiloModel.Create(silo, library.Get(silo.Material));
            Assert.True(model.CapacityM3 > 0);
            var strains = new double[model.Gauges.Count];
            model.ExpectedStrains(model.StateAtLevel(model.Geometry.MaxLevelM), strains);
            Assert.All(model.Gauges.Where(g => g.IsModelled), g => Assert.True(double.IsFinite(strains[g.Index])));
        }
    }
}
