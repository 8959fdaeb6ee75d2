using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class InversionTests
{
    public static TheoryData<string> Shapes() => [.. TestSilos.AllShapes().Select(s => s.Name)];

    [Theory]
    [MemberData(nameof(Shapes))]
    public void LevelToFloorLoadToLevelRoundTrips(string shape)
    {
        var silo = TestSilos.AllShapes().Single(s => s.Name == shape).Silo;
        var model = SiloModel.Create(silo, TestSilos.Wheat());
        for (var i = 1; i <= 40; i++)
        {
            var level = model.Geometry.MaxLevelM * i / 40;
            var load = model.FloorLoadAtLevelKn(level);
            var result = model.InvertFloorLoad(load);
            Assert.Equal(InversionStatus.Solved, result.Status);
            Assert.True(Math.Abs(result.LevelM - level) < 1e-7, $"{shape}: {level} m → {load} kN → {result.LevelM} m");
            Assert.Equal(model.MassAtLevelKg(level), result.MassKg, 1e-6 * result.MassKg);
            // The expected floor load of the same state is the same function.
            Assert.Equal(load, model.Expect(model.StateAtLevel(level)).FloorLoadKn, 1e-9 * load);
        }
    }

    [Theory]
    [MemberData(nameof(Shapes))]
    public void TheFloorLoadOfAMassIsTheLoadTheInversionTakesBackToThatMass(string shape)
    {
        var silo = TestSilos.AllShapes().Single(s => s.Name == shape).Silo;
        var model = SiloModel.Create(silo, TestSilos.Wheat());
        var p = model.Expected;
        // Other properties: a lighter solid with more wall friction stands higher for the same mass.
        var other = new SolidProperties(0.9 * p.UnitWeightKnM3, p.K, 1.3 * p.Mu);
        var otherModel = model.WithExpected(other);
        for (var i = 1; i <= 20; i++)
        {
            var mass = model.CapacityKg * i / 21;
            Assert.Equal(model.Expect(model.StateAtMass(mass)).FloorLoadKn, model.FloorLoadAtMassKn(mass, p), 1e-9 * mass);
            var load = model.FloorLoadAtMassKn(mass, other);
            Assert.Equal(otherModel.Expect(otherModel.StateAtMass(mass)).FloorLoadKn, load, 1e-9 * mass);
            var back = model.InvertFloorLoad(load, other);
            Assert.True(back.HasLevel, $"{shape}: {mass} kg");
            Assert.Equal(mass, back.MassKg, 1e-7 * mass);
        }
    }

    [Fact]
    public void ALoadAboveSaturationHasNoSolutionAndSaysSo()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18), TestSilos.Wheat());
        var p = model.Expected;
        var saturation = model.AreaM2 * p.UnitWeightKnM3 * model.CharacteristicDepthM; // A·γ·z0 [D]
        var result = model.InvertFloorLoad(saturation * 1.01);
        Assert.Equal(InversionStatus.AboveSaturation, result.Status);
        Assert.False(result.HasLevel);
        Assert.Equal(saturation, result.SaturationLoadKn, 9);
        Assert.StartsWith("no solution: the load", result.Message, StringComparison.Ordinal);
        Assert.Contains("above saturation for these properties", result.Message, StringComparison.Ordinal);

        // The same load with 10 % less K·μ is solvable: the conditioning DOMAIN.md §3 warns of.
        var lower = model.InvertFloorLoad(saturation * 1.01, p.WithKMu(p.KMu * 0.9));
        Assert.True(lower.HasLevel);
    }

    [Fact]
    public void ALoadAboveTheFullSiloButBelowSaturationExtrapolatesAboveTheEaves()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18), TestSilos.Wheat());
        var full = model.FloorLoadAtLevelKn(model.Geometry.MaxLevelM);
        var result = model.InvertFloorLoad(full * 1.02);
        Assert.Equal(InversionStatus.AboveFullLevel, result.Status);
        Assert.True(result.LevelM > model.Geometry.MaxLevelM);
        Assert.Contains("above the eaves", result.Message, StringComparison.Ordinal);
        Assert.Equal(InversionStatus.Empty, model.InvertFloorLoad(-3).Status);
    }

    [Theory]
    [InlineData(8.0)]
    [InlineData(16.0)]
    public void SensitivitiesMatchFiniteDifferences(double level)
    {
        var model = SiloModel.Create(TestSilos.Circular(8, 24, HopperShape.Conical, 30, 0.6), TestSilos.Library().Get("cement"));
        var load = model.FloorLoadAtLevelKn(model.Geometry.HopperHeightM + level);
        var result = model.InvertFloorLoad(load);
        var dF = 1e-5 * load;
        var byLoad = (model.InvertFloorLoad(load + dF).LevelM - model.InvertFloorLoad(load - dF).LevelM) / (2 * dF);
        Assert.Equal(1.0, result.DLevelDLoadMPerKn / byLoad, 5);

        var p = model.Expected;
        var dk = 1e-5 * p.KMu;
        var byKMu = (model.InvertFloorLoad(load, p.WithKMu(p.KMu + dk)).LevelM - model.InvertFloorLoad(load, p.WithKMu(p.KMu - dk)).LevelM) / (2 * dk);
        Assert.Equal(1.0, result.DLevelDKMuM / byKMu, 5);
        Assert.True(result.DLevelDKMuM > 0, "more wall friction means more solid for the same floor load");
    }

    [Fact]
    public void NearSaturationOnePercentOfFloorLoadIsSeveralPercentOfHeight()
    {
        // DOMAIN.md §3 [D]: the inversion is badly conditioned in a slender silo.
        var model = SiloModel.Create(TestSilos.Circular(6, 30), TestSilos.Wheat());
        var level = model.Geometry.MaxLevelM;
        var load = model.FloorLoadAtLevelKn(level);
        var result = model.InvertFloorLoad(load);
        var relative = result.DLevelDLoadMPerKn * 0.01 * load / level;
        Assert.True(relative > 0.03, $"1 % of load moved the level by {relative:P1}");
    }
}
