using SiloWatch.Plant;
using SiloWatch.Simulator.Physics;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class SliceEquationsTests
{
    // Wheat on a smooth steel wall in a 6 m silo: γ = 9 kN/m³, K = 0.54, μ = 0.38 (EN 1991-4 Table E.1 values as in
    // config/materials.json; only their plausibility matters here), A/U = D/4 = 1.5 m.
    private const double Gamma = 9.0;
    private const double KMu = 0.54 * 0.38;
    private const double HydraulicRadius = 1.5;

    [Fact]
    public void TheIntegratedVerticalStressReproducesJanssensClosedForm()
    {
        // Reference: p_v = γ·z0·(1 − e^(−z/z0)) + q0·e^(−z/z0), z0 = (A/U)/(K·μ) [D/Janssen 1895; DOMAIN.md §1].
        const double q0 = 6.0;
        var profile = SliceEquations.Vertical(Gamma, KMu, HydraulicRadius, q0, 20);
        var z0 = HydraulicRadius / KMu;
        foreach (var z in new[] { 0.5, 2.0, 7.3, 12.0, 20.0 })
        {
            var closed = (Gamma * z0 * (1 - Math.Exp(-z / z0))) + (q0 * Math.Exp(-z / z0));
            // RK4 with 5 cm steps on a linear ODE with decay 0.137/m: truncation error ~1e-12 relative; 1e-9 leaves room for interpolation at grid points.
            Assert.Equal(closed, profile.VerticalAt(z), closed * 1e-9);
        }
    }

    [Fact]
    public void TheAccumulatedWallFrictionReproducesTheClosedFormIntegral()
    {
        // Reference: n_z = (A/U)·[γ·z − (γ·z0 − q0)·(1 − e^(−z/z0))] [D: ∫ μ·K·p_v dz of Janssen's p_v; DOMAIN.md §1 with q0].
        const double q0 = 3.0;
        var profile = SliceEquations.Vertical(Gamma, KMu, HydraulicRadius, q0, 18);
        var z0 = HydraulicRadius / KMu;
        var closed = HydraulicRadius * ((Gamma * 18) - (((Gamma * z0) - q0) * (1 - Math.Exp(-18 / z0))));
        Assert.Equal(closed, profile.BottomWallFrictionKnPerM, closed * 1e-9);
    }

    [Fact]
    public void TheOwnIntegratorAgreesWithMathNetsRungeKutta()
    {
        // Outside reference library: MathNet.Numerics.OdeSolvers.RungeKutta.FourthOrder on the same slice equation.
        const double depth = 15.0;
        var own = SliceEquations.Vertical(Gamma, KMu, HydraulicRadius, 0, depth);
        var points = own.DepthM.Length;
        var reference = MathNet.Numerics.OdeSolvers.RungeKutta.FourthOrder(0.0, 0.0, depth, points, (_, p) => Gamma - (KMu / HydraulicRadius * p));
        Assert.Equal(reference[^1], own.BottomVerticalKPa, 1e-9);
        Assert.Equal(reference[points / 2], own.VerticalKPa[points / 2], 1e-9);
    }

    public static TheoryData<string, double> SilosAndFills()
    {
        var data = new TheoryData<string, double>();
        foreach (var silo in new[] { "S1", "S2", "C1", "F1" })
        {
            foreach (var fill in new[] { 2.0, 8.0, 30.0, 65.0, 99.0 })
            {
                data.Add(silo, fill);
            }
        }

        return data;
    }

    [Theory]
    [MemberData(nameof(SilosAndFills))]
    public void FloorLoadPlusWallFrictionEqualsTheWeightOfTheContents(string siloId, double fillPercent)
    {
        var (shape, solid) = ShapeOf(siloId);
        var volume = shape.CapacityM3 * fillPercent / 100;
        var weight = solid.UnitWeightKnM3 * volume;
        foreach (var discharge in new[] { 0.0, 1.0 })
        {
            var s = SiloLoads.Compute(shape, solid, volume, discharge, ch: 1.15, cw: 1.10, channel: null);
            // Tolerance 1e-6 of the weight: RK4 truncation is ~1e-10, the volume-to-level bisection 2^-60; this is
            // an equilibrium identity, so anything larger is a modelling error, not rounding.
            Assert.Equal(weight, s.BaseLoadKn + s.WallFrictionKn, weight * 1e-6);
            if (!s.Surface.InHopper)
            {
                Assert.Equal(s.VerticalPartWeightKn, s.FloorForceKn + s.WallFrictionKn, weight * 1e-6);
            }
        }
    }

    [Fact]
    public void DischargeMovesLoadFromTheFloorToTheWallByTheFrictionFactor()
    {
        var (shape, solid) = ShapeOf("C1");
        var volume = shape.CapacityM3 * 0.8;
        var filling = SiloLoads.Compute(shape, solid, volume, 0, 1.15, 1.10, null);
        var discharge = SiloLoads.Compute(shape, solid, volume, 1, 1.15, 1.10, null);
        Assert.Equal(filling.WallFrictionKn * 1.10, discharge.WallFrictionKn, 1e-6);
        Assert.True(discharge.FloorForceKn < filling.FloorForceKn);
    }

    [Fact]
    public void TheHopperIntegrationReproducesWalkersClosedForm()
    {
        // Reference: p_v(x) = (γ·h/(n−1))·[(x/h) − (x/h)^n] + p_vft·(x/h)^n, n = 2·(F·μ·cotβ + F) − 2 for a cone,
        // x up from the apex, h the apex-to-transition height [D; Walker 1966; DOMAIN.md §1].
        var (shape, solid) = ShapeOf("S1");
        const double pvft = 40.0;
        var hopper = SliceEquations.Hopper(shape, solid.UnitWeightKnM3, solid.HopperWallFriction, pvft, shape.HopperApexToTransitionM);
        var f = SliceEquations.HopperPressureRatio(shape.HopperTanBeta, solid.HopperWallFriction);
        var n = (2 * ((f * solid.HopperWallFriction / shape.HopperTanBeta) + f)) - 2;
        var h = shape.HopperApexToTransitionM;
        var r = shape.HopperApexToOutletM / h;
        var closed = (solid.UnitWeightKnM3 * h / (n - 1) * (r - Math.Pow(r, n))) + (pvft * Math.Pow(r, n));
        Assert.Equal(closed, hopper.OutletVerticalKPa, closed * 1e-6);
    }

    [Theory]
    [InlineData("S1")]
    [InlineData("F1")]
    public void TheHopperWallsAndOutletCarryTheLoadAtTheTransitionPlusTheHopperContents(string siloId)
    {
        var (shape, solid) = ShapeOf(siloId);
        var hopper = SliceEquations.Hopper(shape, solid.UnitWeightKnM3, solid.HopperWallFriction, 35, shape.HopperApexToTransitionM);
        var total = hopper.TransitionForceKn + hopper.ContentsWeightKn;
        Assert.Equal(total, hopper.WallVerticalForceKn + hopper.OutletForceKn, total * 1e-6);
    }

    [Fact]
    public void TheHopperVolumeIsThatOfAConeFrustum()
    {
        // Reference: V = π·h/3·(R² + R·r + r²) [V: solid geometry].
        var (shape, _) = ShapeOf("S1");
        var g = TestPlant.Silo("S1").Geometry;
        var big = g.DiameterM / 2;
        var small = g.Hopper.OutletM / 2;
        var h = (big - small) / Math.Tan(g.Hopper.HalfAngleDeg * Math.PI / 180);
        var frustum = Math.PI * h / 3 * ((big * big) + (big * small) + (small * small));
        Assert.Equal(frustum, shape.HopperVolumeM3, 1e-9);
        Assert.Equal(h, shape.HopperHeightM, 1e-12);
    }

    [Fact]
    public void TheVolumeToSurfaceRelationRoundTripsThroughTheHeap()
    {
        var (shape, _) = ShapeOf("S1");
        foreach (var fraction in new[] { 0.01, 0.1, 0.11, 0.5, 0.97 })
        {
            var v = shape.CapacityM3 * fraction;
            var s = shape.SurfaceFor(v);
            var back = s.InHopper
                ? shape.HopperVolumeBelow(shape.HopperApexToTransitionM + s.ContactHeightM)
                : shape.HopperVolumeM3 + (shape.AreaM2 * (s.ContactHeightM + (s.HeapHeightM / 3)));
            Assert.Equal(v, back, v * 1e-9);
        }
    }

    [Fact]
    public void AFullHeapStandsAtTheAngleOfRepose()
    {
        // h = r·tanφ_r for a centred cone [V: EN 1991-4 eq. 5.78 gives h_o = r·tanφ_r/3 for its equivalent surface].
        var (shape, _) = ShapeOf("S1");
        var s = shape.SurfaceFor(shape.CapacityM3 * 0.6);
        Assert.Equal(3.0 * Math.Tan(34 * Math.PI / 180), s.HeapHeightM, 1e-9);
        Assert.Equal(s.ContactHeightM + (3.0 * Math.Tan(34 * Math.PI / 180) / 3), s.EquivalentLevelM, 1e-9);
    }

    internal static (SiloShape Shape, SolidParameters Solid) ShapeOf(string siloId)
    {
        var silo = TestPlant.Silo(siloId);
        var m = TestPlant.Materials[silo.Material];
        var shape = new SiloShape(silo.Geometry, m.AngleOfReposeDeg);
        var mu = m.WallFriction(silo.Geometry.WallCategory);
        return (shape, new SolidParameters(m.UnitWeightMeanKnM3, m.KMean, mu, m.WallFriction(silo.Geometry.Hopper.WallCategory ?? silo.Geometry.WallCategory), Math.Tan(m.AngleOfReposeDeg * Math.PI / 180)));
    }
}
