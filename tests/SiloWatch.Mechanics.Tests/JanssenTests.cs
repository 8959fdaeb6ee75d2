using MathNet.Numerics.OdeSolvers;
using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class JanssenTests
{
    // Slice equilibrium dp_v/dz = γ − (K·μ·U/A)·p_v (DOMAIN.md §1 [D], Janssen 1895), integrated by a
    // general-purpose solver (MathNet RK4, fine step) and compared with the closed form to 1e-6.
    [Theory]
    [InlineData(9.0, 1.5, 0.2, 0.0)]
    [InlineData(9.0, 1.5, 0.2, 25.0)]
    [InlineData(16.0, 0.75, 0.35, 5.0)]
    [InlineData(14.0, 2.0, 0.5, 80.0)] // surcharge above saturation: p_v falls towards γ·z0
    public void TheClosedFormMatchesANumericalIntegrationOfTheSliceEquilibrium(double gamma, double hydraulicRadius, double kMu, double surcharge)
    {
        var z0 = Janssen.CharacteristicDepthM(hydraulicRadius, kMu);
        var depth = 5 * z0;
        const int n = 20_001;
        var pv = RungeKutta.FourthOrder(surcharge, 0, depth, n, (_, p) => gamma - (kMu / hydraulicRadius * p));
        // n_z accumulates μ·K·p_v: a second ODE dn_z/dz = K·μ·p_v integrated alongside with the same solver.
        var nz = RungeKutta.FourthOrder(0.0, 0, depth, n, (z, _) => kMu * Janssen.VerticalStressKPa(gamma, z0, z, surcharge));
        for (var i = 1; i < n; i += 997)
        {
            var z = depth * i / (n - 1);
            Assert.Equal(1.0, Janssen.VerticalStressKPa(gamma, z0, z, surcharge) / pv[i], 1e-6);
            Assert.Equal(1.0, Janssen.WallFrictionForceKnPerM(gamma, z0, hydraulicRadius, z, surcharge) / nz[i], 1e-6);
        }
    }

    [Fact]
    public void TheSiloModelsWallLoadsMatchTheIntegratedSliceEquilibriumWithTheHeapAsSurcharge()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18), TestSilos.Wheat());
        var p = model.Expected;
        var q0 = p.UnitWeightKnM3 * model.Geometry.HeapEquivalentHeightM;
        var state = model.StateAtLevel(16.0);
        const int n = 16_001;
        var rk = RungeKutta.FourthOrder(q0, 0, 16.0, n, (_, pv) => p.UnitWeightKnM3 - (p.KMu / model.HydraulicRadiusM * pv));
        for (var i = 1000; i < n; i += 1000)
        {
            var depth = 16.0 * i / (n - 1);
            var wall = model.WallAt(state, 16.0 - depth);
            Assert.Equal(1.0, wall.VerticalKPa / rk[i], 1e-6);
            Assert.Equal(p.K * rk[i], wall.HorizontalKPa, 1e-6 * wall.HorizontalKPa);
        }
    }

    [Theory]
    [InlineData(9.0, 1.5, 0.2)]
    [InlineData(15.0, 1.0, 0.4)]
    public void FloorForcePlusAccumulatedWallFrictionEqualsTheWeightOfTheContents(double gamma, double hydraulicRadius, double kMu)
    {
        // F_f + F_w = γ·A·H exactly [D, DOMAIN.md §1]; here per unit area: p_v(H) + n_z(H)/(A/U) = γ·H.
        var z0 = Janssen.CharacteristicDepthM(hydraulicRadius, kMu);
        foreach (var h in new[] { 0.01, 0.5, 3.0, 12.0, 40.0 })
        {
            var floor = Janssen.VerticalStressKPa(gamma, z0, h);
            var wall = Janssen.WallFrictionForceKnPerM(gamma, z0, hydraulicRadius, h) / hydraulicRadius;
            Assert.Equal(gamma * h, floor + wall, 1e-9 * gamma * h);
        }
    }

    [Fact]
    public void EveryModelledShapeSplitsTheContentsIntoFloorLoadAndWallFrictionWithoutLoss()
    {
        foreach (var (name, silo) in TestSilos.AllShapes())
        {
            var model = SiloModel.Create(silo, TestSilos.Wheat());
            for (var level = 0.0; level <= model.Geometry.MaxLevelM; level += model.Geometry.MaxLevelM / 7)
            {
                var loads = model.Expect(model.StateAtLevel(level));
                Assert.True(Math.Abs(loads.ContentsWeightKn - loads.FloorLoadKn - loads.WallFrictionKn) <= 1e-9 * Math.Max(1, loads.ContentsWeightKn), $"{name} at {level} m");
                Assert.True(loads.FloorLoadKn <= loads.ContentsWeightKn + 1e-9, name);
            }
        }
    }

    [Fact]
    public void AShallowFillCarriesItsOwnWeightAndADeepFillSaturatesAtGammaZ0()
    {
        const double gamma = 9.0;
        var z0 = Janssen.CharacteristicDepthM(1.5, 0.2);
        // Shallow: p_v → γ·z (friction negligible) [D: first term of the series].
        var shallow = 1e-3 * z0;
        Assert.Equal(1.0, Janssen.VerticalStressKPa(gamma, z0, shallow) / (gamma * shallow), 1e-3);
        // Deep: p_v → γ·z0 [D].
        Assert.Equal(1.0, Janssen.VerticalStressKPa(gamma, z0, 40 * z0) / (gamma * z0), 1e-12);
        Assert.True(Janssen.VerticalStressKPa(gamma, z0, 10 * z0) < gamma * z0);
    }

    [Theory]
    // Floor share f = (1 − e^(−x))/x, x = H/z0 [D, DOMAIN.md §1 table].
    [InlineData(1, 0.632)]
    [InlineData(2, 0.432)]
    [InlineData(4, 0.245)]
    [InlineData(10, 0.100)]
    public void TheFloorShareFollowsTheTable(double x, double share)
    {
        Assert.Equal(share, Janssen.FloorShare(x), 3);
        Assert.Equal(1.0, Janssen.FloorShare(1e-9), 9);
    }

    [Fact]
    public void WithKMuOfOneHalfTheFloorPressureOfATallSandColumnStopsGrowingWithinThreeRadii()
    {
        // Fact of the trade (common practice, no source): in a tall narrow container of dry sand with a
        // sand-roughened wall the floor pressure stops growing within a depth comparable to the radius,
        // i.e. K·μ close to 0.5. Derivation [D]: z0 = (A/U)/(K·μ) = (D/4)/0.5 = D/2 = r, so the radius IS
        // z0; p_v/p_v∞ = 1 − e^(−z/r) passes 95 % at z = r·ln 20 = 2.996·r, i.e. at z ≈ 3·(A/U)/0.5.
        // Asserted: z0 = r; 63 % at one radius; above 95 % at three radii and not yet at 2.9 radii.
        const double radius = 0.05;
        var rh = 2 * radius / 4;
        var z0 = Janssen.CharacteristicDepthM(rh, 0.5);
        Assert.Equal(radius, z0, 12);
        const double gamma = 15.0;
        var saturation = Janssen.SaturationVerticalStressKPa(gamma, z0);
        Assert.Equal(0.632, Janssen.VerticalStressKPa(gamma, z0, radius) / saturation, 3);
        Assert.True(Janssen.VerticalStressKPa(gamma, z0, 3 * rh / 0.5) / saturation > 0.95);
        Assert.True(Janssen.VerticalStressKPa(gamma, z0, 2.9 * radius) / saturation < 0.95);
    }

    [Fact]
    public void AFlatBottomedSiloFloorCarriesTheFloorShareOfTheWeight()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18), TestSilos.Wheat());
        // With the heap as a surcharge the floor share of the prismatic column follows from
        // F_f = A·[γz0 − (γz0 − q0)e^(−H/z0)] [D]; without a heap (φ_r = 0) it is the table's f.
        var flat = TestSilos.Wheat() with { AngleOfReposeDeg = 0 };
        var noHeap = SiloModel.Create(TestSilos.Circular(6, 18), flat);
        var state = noHeap.StateAtLevel(18);
        var loads = noHeap.Expect(state);
        var x = 18 / noHeap.CharacteristicDepthM;
        Assert.Equal(Janssen.FloorShare(x), loads.FloorLoadKn / loads.ContentsWeightKn, 12);
        Assert.True(model.Expect(model.StateAtLevel(18)).FloorLoadKn > loads.FloorLoadKn);
    }

    [Fact]
    public void WallCategoryD4WithoutAnEffectiveFrictionIsRefusedByName()
    {
        var ex = Assert.Throws<NotSupportedException>(() => TestSilos.Wheat().MuMean(WallCategory.D4));
        Assert.Contains("D4", ex.Message, StringComparison.Ordinal);
    }
}
