using MathNet.Numerics.OdeSolvers;
using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class HopperLoadsTests
{
    // Slice of a hopper at height x above the apex, written from the geometry alone [D, DOMAIN.md §1]:
    // d(A·p_v)/dx = −γ·A + P·p_n·(tanβ + μ) with p_n = F·p_v; the wall carries the slice through the
    // vertical components of the normal pressure and of the friction on the slanted wall. Integrated
    // downward from the transition with MathNet RK4 (s = depth below the transition), compared with
    // the closed form p_v(x) = γh/(n−1)·[(x/h) − (x/h)^n] + p_vft·(x/h)^n, n = S(Fμcotβ + F − 1)
    // (DOMAIN.md's S(Fμcotβ + F) − 2 for S = 2; the wedge case shows the −1 is what statics gives).
    [Theory]
    [InlineData(HopperShape.Conical, 30.0, 0.38, 20.0)]
    [InlineData(HopperShape.Conical, 20.0, 0.25, 0.0)]
    [InlineData(HopperShape.Pyramidal, 25.0, 0.45, 35.0)]
    [InlineData(HopperShape.Wedge, 15.0, 0.30, 40.0)]
    public void TheHopperClosedFormMatchesTheIntegratedSliceEquilibrium(HopperShape shape, double betaDeg, double mu, double pvft)
    {
        const double gamma = 9.0;
        const double h = 5.0; // apex to transition
        var t = Math.Tan(betaDeg * Math.PI / 180);
        var f = HopperLoads.FillingF(t, mu);
        var n = HopperLoads.PowerN(HopperLoads.ShapeFactorS(shape), f, mu, t);
        const double length = 3.0; // wedge: along the slot, end walls ignored (plane flow)
        (double A, double P, double DA) Section(double x) => shape switch
        {
            HopperShape.Conical => (Math.PI * x * x * t * t, 2 * Math.PI * x * t, 2 * Math.PI * x * t * t),
            HopperShape.Pyramidal => (4 * x * x * t * t, 8 * x * t, 8 * x * t * t),
            _ => (2 * x * t * length, 2 * length, 2 * t * length),
        };
        var xOutlet = 0.4 * h;
        const int steps = 40_001;
        var rk = RungeKutta.FourthOrder(pvft, 0, h - xOutlet, steps, (s, p) =>
        {
            var (a, perimeter, dA) = Section(h - s);
            return gamma - (p * ((perimeter * f * (t + mu)) - dA) / a);
        });
        for (var i = 500; i < steps; i += 1500)
        {
            var x = h - ((h - xOutlet) * i / (steps - 1));
            Assert.Equal(1.0, HopperLoads.VerticalStressKPa(gamma, h, x, n, pvft) / rk[i], 1e-6);
        }
    }

    [Theory]
    [InlineData(HopperShape.Conical, 30.0, 0.38)]
    [InlineData(HopperShape.Pyramidal, 25.0, 0.45)]
    [InlineData(HopperShape.Wedge, 15.0, 0.30)]
    public void TheExponentFollowsEn1991Part4ForConesAndPyramidsAndTheSliceStaticsForWedges(HopperShape shape, double betaDeg, double mu)
    {
        // EN 1991-4:2006 §6.3.2 [M: from memory, as DOMAIN.md §1 gives it]: n = S·(F·μ_h·cotβ + F) − 2, S = 2 for cones and
        // square pyramids, S = 1 for wedges. Slice statics [D]: n = S·(F·μ_h·cotβ + F − 1), the form the test above checks
        // against an integration of the equilibrium.
        var t = Math.Tan(betaDeg * Math.PI / 180);
        var f = HopperLoads.FillingF(t, mu);
        var s = HopperLoads.ShapeFactorS(shape);
        var standard = (s * ((f * mu / t) + f)) - 2;
        var statics = HopperLoads.PowerN(s, f, mu, t);

        Assert.Equal(standard, HopperLoads.PowerN(s, f, mu, t, HopperExponentRule.En1991Part4), 12);
        Assert.Equal(shape == HopperShape.Wedge ? standard + 1 : standard, statics, 12);
    }

    [Fact]
    public void AWedgeHopperUsesTheStandardsExponentOnlyWhenTheFactorsAskForIt()
    {
        // Wedge β = 20°, wheat on D2: n(statics) − n(EN 1991-4 as written) = 1, and the standard's form carries more of the
        // transition stress down the hopper: higher (conservative) vertical stress at mid-height.
        var silo = TestSilos.Rectangular(3, 6, 12, HopperShape.Wedge, 20, 0.4);
        var statics = SiloModel.Create(silo, TestSilos.Wheat());
        var standard = SiloModel.Create(silo, TestSilos.Wheat(), new SiloModelOptions { Factors = new LoadFactors { HopperExponent = HopperExponentRule.En1991Part4 } });
        Assert.Equal(HopperExponentRule.SliceStatics, LoadFactors.Default.HopperExponent);
        Assert.Equal(1.0, statics.HopperN - standard.HopperN, 12);

        var full = statics.StateAtLevel(statics.Geometry.MaxLevelM);
        var mid = 0.5 * statics.Geometry.HopperHeightM;
        Assert.True(standard.HopperAt(standard.StateAtLevel(standard.Geometry.MaxLevelM), mid).VerticalKPa > statics.HopperAt(full, mid).VerticalKPa);
    }

    [Fact]
    public void TheSiloModelsHopperStressesContinueFromTheTransitionLoadAsTheSliceEquilibriumSays()
    {
        var model = SiloModel.Create(TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5), TestSilos.Wheat());
        var state = model.StateAtLevel(model.Geometry.MaxLevelM);
        var pvft = model.WallAt(state, 0).VerticalKPa;
        var (pvTop, _, _) = model.HopperAt(state, model.Geometry.HopperHeightM);
        Assert.Equal(pvft, pvTop, 1e-9 * pvft);

        var g = model.Expected.UnitWeightKnM3;
        var t = Math.Tan(Math.PI / 6);
        var f = model.HopperF;
        var mu = model.HopperFrictionUsed;
        var h = model.Geometry.HopperApexHeightM;
        var depth = model.Geometry.HopperHeightM;
        const int steps = 20_001;
        var rk = RungeKutta.FourthOrder(pvft, 0, depth, steps, (s, p) =>
        {
            var x = h - s;
            return g - (p * ((2 * Math.PI * x * t * f * (t + mu)) - (2 * Math.PI * x * t * t)) / (Math.PI * x * x * t * t));
        });
        for (var i = 1000; i < steps; i += 2000)
        {
            var s = depth * i / (steps - 1);
            var (pv, pn, pt) = model.HopperAt(state, depth - s);
            Assert.Equal(1.0, pv / rk[i], 1e-6);
            Assert.Equal(f * pv, pn, 1e-12 * pn);
            Assert.Equal(mu * pn, pt, 1e-12 * pn);
        }
    }

    [Fact]
    public void SteepAndShallowHoppersAreToldApartByEquation6Point1()
    {
        // EN 1991-4 eq. 6.1 [V]: steep if tanβ < (1 − K)/(2μ_h), K and μ_h lower values.
        Assert.True(HopperLoads.IsSteep(Math.Tan(Math.PI / 6), 0.486, 0.3276));    // wheat D2, β = 30°: 0.577 < 0.784
        Assert.False(HopperLoads.IsSteep(Math.Tan(Math.PI / 6), 0.383, 0.5794));   // fly ash D2, β = 30°: 0.577 > 0.532

        var library = TestSilos.Library();
        var ashSilo = SiloModel.Create(TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5), library.Get("fly-ash"));
        Assert.False(ashSilo.HopperIsSteep);
        // Shallow: the friction used is the mobilised (1 − K)/(2 tanβ) [M?], below the wall's μ.
        Assert.True(ashSilo.HopperFrictionUsed < ashSilo.Expected.Mu * 1.0000001);
        var steep = SiloModel.Create(TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5), library.Get("wheat"));
        Assert.True(steep.HopperIsSteep);
        Assert.Equal(library.Get("wheat").MuMean(WallCategory.D2), steep.HopperFrictionUsed, 12);
    }

    [Fact]
    public void TheFillingRatioFFollowsTheHopperFormula()
    {
        // F_f = 1 − b/(1 + tanβ/μ_h), b = 0.2 [M]: β = 30°, μ = 0.38 → 1 − 0.2/(1 + 1.51934) = 0.920614.
        Assert.Equal(0.920614, HopperLoads.FillingF(Math.Tan(Math.PI / 6), 0.38), 6);
    }
}
