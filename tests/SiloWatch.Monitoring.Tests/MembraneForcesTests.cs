using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

public sealed class MembraneForcesTests
{
    [Fact]
    public void AUniaxialStressIsRecoveredFromItsTwoStrains()
    {
        // Hooke's law, plane stress [textbook elasticity, D]: σ uniaxial gives ε_z = σ/E, ε_θ = −ν·σ/E.
        const double e = 200, nu = 0.3, sigmaKPa = -40_000;
        var ez = sigmaKPa / e;
        var et = -nu * sigmaKPa / e;

        Assert.Equal(sigmaKPa, MembraneForces.AxialStressKPa(ez, et, e, nu), 6);
        Assert.Equal(0, MembraneForces.HoopStressKPa(ez, et, e, nu), 6);
    }

    [Fact]
    public void TheWallForcesOfTheMechanicsModelAreRecoveredFromItsExpectedGaugeStrains()
    {
        // Cross-check with the mechanics library: its gauge strains for a fill, turned back into n_z and n_θ.
        var model = DemoPlant.Model("S1");
        var state = model.StateAtMass(0.8 * model.CapacityKg);
        var strains = new double[model.Gauges.Count];
        model.ExpectedStrains(state, strains);
        var axial = model.Gauges.First(g => g.Kind == Plant.SensorKind.AxialStrain);
        var wall = model.WallAt(state, axial.HeightAboveTransitionM);
        var g = model.Silo.Geometry;

        // Only the axial gauge at that height: the hoop stress comes from the model's p_h·r/t.
        var sigmaZ = MembraneForces.AxialStressFromAxialStrainKPa(strains[axial.Index], wall.HoopForceKnPerM / g.WallThicknessM, g.WallYoungsModulusGPa, g.WallPoissonRatio);
        var nz = -MembraneForces.ForcePerMetreKnPerM(sigmaZ, g.WallThicknessM);

        Assert.Equal(wall.AxialForceKnPerM, nz, 6);
        Assert.True(nz > 0, "wall friction compresses the wall");
    }

    [Fact]
    public void HoopPressureOfAThinWallIsItsHoopForceOverTheRadius()
    {
        Assert.Equal(25.0, MembraneForces.HoopPressureKPa(75.0, 3.0), 12);
    }
}
