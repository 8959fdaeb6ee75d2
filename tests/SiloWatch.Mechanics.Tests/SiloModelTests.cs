using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class SiloModelTests
{
    [Fact]
    public void AMassAboveCapacityRaisesTheContactPastTheEavesInsteadOfClampingIt()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5), TestSilos.Wheat());
        var state = model.StateAtMass(model.CapacityKg * 1.05);
        Assert.True(state.LevelM > model.Geometry.MaxLevelM - model.Geometry.HeapEquivalentHeightM);
        Assert.Equal(model.CapacityKg * 1.05, state.MassKg, 1e-6 * state.MassKg);
        var loads = model.Expect(state);
        Assert.Equal(Units.MassKgToWeightKn(state.MassKg), loads.ContentsWeightKn, 1e-6 * loads.ContentsWeightKn);
    }

    [Fact]
    public void ASolidAllInTheHopperRestsWhollyOnTheHopper()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5), TestSilos.Wheat());
        var state = model.StateAtLevel(2.0);
        Assert.True(state.ContactAboveTransitionM < 0);
        var loads = model.Expect(state);
        Assert.Equal(loads.ContentsWeightKn, loads.FloorLoadKn);
        Assert.Equal(0, loads.WallFrictionKn);
        Assert.Equal(0, model.WallAt(state, 0).HorizontalKPa);
        var (pv, _, _) = model.HopperAt(state, 1.0);
        Assert.True(pv > 0);
        Assert.Equal(0, model.HopperAt(state, 2.5).VerticalKPa);
    }

    [Fact]
    public void MassAndLevelConvertThroughTheExpectedBulkDensity()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18), TestSilos.Wheat());
        // Mean wheat unit weight (7.5 + 9.0)/2 = 8.25 kN/m³ [D choice] → ρ = 8250/9.80665 kg/m³.
        Assert.Equal(8250 / 9.80665, model.Expected.BulkDensityKgM3, 9);
        Assert.Equal(12.0, model.LevelAtMassKg(model.MassAtLevelKg(12.0)), 9);
        Assert.Equal(model.CapacityM3 * model.Expected.BulkDensityKgM3, model.CapacityKg, 6);
    }

    [Fact]
    public void ACalibratedModelUsesItsOwnPropertiesEverywhere()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18), TestSilos.Wheat());
        var calibrated = model.WithExpected(model.Expected.WithKMu(model.Expected.KMu * 1.2));
        Assert.Equal(model.CharacteristicDepthM / 1.2, calibrated.CharacteristicDepthM, 9);
        var load = model.FloorLoadAtLevelKn(8);
        // More wall friction: the same floor load means a higher level (at 15 m it would be above the
        // lower saturation already: the conditioning DOMAIN.md §3 warns of).
        var inverted = calibrated.InvertFloorLoad(load);
        Assert.Equal(InversionStatus.Solved, inverted.Status);
        Assert.True(inverted.LevelM > 8);
        Assert.Equal(8, calibrated.InvertFloorLoad(load, model.Expected).LevelM, 7);
        Assert.Equal(InversionStatus.AboveSaturation, calibrated.InvertFloorLoad(model.FloorLoadAtLevelKn(15)).Status);
    }

    [Fact]
    public void TheDemoSilosAreClassedAsTheirProportionsSay()
    {
        var library = TestSilos.Library();
        var (plant, _) = PlantLoader.LoadFile(TestSilos.ConfigPath("plant.demo.json"), library.Names);
        var models = plant.Sites.SelectMany(s => s.Silos).ToDictionary(s => s.Id, s => SiloModel.Create(s, library.Get(s.Material)));
        // S1 18/6 = 3, S2 15/4.5 = 3.3, C1 24/8 = 3, F1 10/4 = 2.5: all slender (≥ 2 [M]).
        Assert.All(models.Values, m => Assert.Equal(AspectRatioClass.Slender, m.AspectRatioClass));
        // C1 holds about 1 322 m³ of cement: 2 158 t at 16 kN/m³ (upper): AAC2 (1 000–10 000 t, central outlet) [M].
        Assert.Equal(ActionAssessmentClass.AAC2, models["C1"].ActionClass);
        Assert.Equal(2157.6, models["C1"].CapacityTonnesUpper, 1);
        // Wheat in a D2 cone of 30°: steep; fly ash in a D2 pyramid of 30°: shallow (eq. 6.1 [V]).
        Assert.True(models["S1"].HopperIsSteep);
        Assert.False(models["F1"].HopperIsSteep);
    }
}
