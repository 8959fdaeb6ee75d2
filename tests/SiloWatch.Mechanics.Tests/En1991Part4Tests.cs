using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class En1991Part4Tests
{
    // Worked example: circular steel silo d_c = 6 m, vertical wall h_c = 18 m (h_c/d_c = 3, slender),
    // rough wall D3, wheat. Wheat values EN 1991-4:2006 Annex E Table E.1: γ_u = 9.0 kN/m³, K_m = 0.54,
    // a_K = 1.11, μ_m(D3) = 0.57, a_μ = 1.16 [V: the wheat row as reproduced in a published paper].
    // Equations §5.2.1.1 eq. 5.1–5.7 [M, high confidence]; property cases Table 3.1 [M].
    private static SiloModel WorkedExample()
    {
        var silo = TestSilos.Circular(6, 18);
        silo.Geometry.WallCategory = WallCategory.D3;
        return SiloModel.Create(silo, TestSilos.Wheat());
    }

    [Fact]
    public void TheSlenderFillingLoadsOfTheWheatExampleFollowTheStandardStepByStep()
    {
        var model = WorkedExample();
        Assert.Equal(AspectRatioClass.Slender, model.AspectRatioClass);

        // Step by step from the standard's equations.
        const double gammaU = 9.0, kM = 0.54, aK = 1.11, muM = 0.57, aMu = 1.16;
        var a = Math.PI * 36 / 4;
        var u = Math.PI * 6;
        var rh = a / u;                     // A/U = d/4 = 1.5 m
        Assert.Equal(1.5, rh, 12);
        double Zo(double k, double mu) => rh / (k * mu);                     // eq. 5.5
        double Yj(double z, double zo) => 1 - Math.Exp(-z / zo);             // eq. 5.6
        const double z = 18.0;

        // Max normal wall pressure: K upper, μ lower.
        var kU = aK * kM;                   // 0.5994
        var muL = muM / aMu;                // 0.49138
        var zoP = Zo(kU, muL);              // 5.0928 m
        var phoP = gammaU * kU * zoP;       // eq. 5.4: 27.474 kPa
        var phf = phoP * Yj(z, zoP);        // eq. 5.1
        // Max wall friction: K upper, μ upper.
        var muU = muM * aMu;
        var zoW = Zo(kU, muU);
        var phoW = gammaU * kU * zoW;
        var pwf = muU * phoW * Yj(z, zoW);  // eq. 5.2
        var nzSk = muU * phoW * (z - (zoW * Yj(z, zoW))); // eq. 5.7
        // Max floor load: K lower, μ lower.
        var kL = kM / aK;
        var zoF = Zo(kL, muL);
        var phoF = gammaU * kL * zoF;
        var pvf = phoF / kL * Yj(z, zoF);   // eq. 5.3

        var point = model.CharacteristicAt(z);
        Assert.Equal(phf, point.Filling.HorizontalKPa, 9);
        Assert.Equal(pwf, point.Filling.WallFrictionKPa, 9);
        Assert.Equal(pvf, point.Filling.VerticalKPa, 9);
        Assert.Equal(nzSk, point.Filling.AxialForceKnPerM, 9);

        // The same numbers from an independent calculation (a short Python script, 4 decimals), so an error common to both paths above shows.
        Assert.Equal(26.6721, point.Filling.HorizontalKPa, 3);
        Assert.Equal(13.3839, point.Filling.WallFrictionKPa, 3);
        Assert.Equal(53.2672, point.Filling.VerticalKPa, 3);
        Assert.Equal(192.3448, point.Filling.AxialForceKnPerM, 3);
        Assert.Equal(17.1808, model.CharacteristicAt(5.0).Filling.HorizontalKPa, 3);
    }

    [Fact]
    public void DischargeLoadsRaiseTheFillingLoadsByTheConfiguredFactors()
    {
        var model = WorkedExample();
        var point = model.CharacteristicAt(18.0);
        // C_h = 1.15, C_w = 1.10 for slender AAC2/3 [M?, DOMAIN.md §2]; configurable.
        Assert.Equal(1.15 * point.Filling.HorizontalKPa, point.Discharge.HorizontalKPa, 9);
        Assert.Equal(1.10 * point.Filling.WallFrictionKPa, point.Discharge.WallFrictionKPa, 9);
        Assert.Equal(point.Filling.VerticalKPa, point.Discharge.VerticalKPa, 12);

        var custom = SiloModel.Create(TestSilos.Circular(6, 18), TestSilos.Wheat(),
            new SiloModelOptions { Factors = new LoadFactors { DischargeHorizontalCh = 1.3, DischargeFrictionCw = 1.0 } });
        var c = custom.CharacteristicAt(10);
        Assert.Equal(1.3 * c.Filling.HorizontalKPa, c.Discharge.HorizontalKPa, 9);
        Assert.Equal(c.Filling.AxialForceKnPerM, c.Discharge.AxialForceKnPerM, 9);
    }

    [Fact]
    public void TheDischargePatchFollowsTheCpeFormula()
    {
        var model = WorkedExample();
        // C_pe = 0.42·C_op·(1 + 2E²)·(1 − e^(−1.5(h_c/d_c − 1))) [M?]; wheat C_op = 0.5 [M];
        // central filling and outlet: E = 0 → 0.21·(1 − e^(−3)) = 0.1995447. Patch height s = π·d_c/16 [M].
        var patch = model.DischargePatchAt(18.0);
        Assert.Equal(0.1995447, patch.Factor, 1e-7);
        Assert.Equal(Math.PI * 6 / 16, patch.HeightM, 12);
        Assert.Equal(patch.Factor * model.CharacteristicAt(18.0).Discharge.HorizontalKPa, patch.PressureKPa, 9);
        // With a filling eccentricity e = 0.6 m: E = 0.2, (1 + 2·0.04) = 1.08.
        Assert.Equal(0.1995447 * 1.08, model.DischargePatchAt(18.0, 0.6).Factor, 1e-7);
    }

    [Fact]
    public void TheFillingPatchIsHalfTheDischargeFormOnTheFillingPressure()
    {
        var model = WorkedExample();
        // C_pf = 0.21·C_op·(1 + 2E²)·(1 − e^(−1.5(h_c/d_c − 1))), E = 2e_f/d_c [M?]: e_f = 0.6 m → 0.105·1.08·0.950213.
        var patch = model.FillingPatchAt(12.0, 0.6);
        Assert.Equal(0.105 * 1.08 * (1 - Math.Exp(-3)), patch.Factor, 12);
        Assert.Equal(patch.Factor * model.CharacteristicAt(12.0).Filling.HorizontalKPa, patch.PressureKPa, 9);
    }

    [Theory]
    [InlineData(2.0, AspectRatioClass.Slender)]
    [InlineData(1.99, AspectRatioClass.Intermediate)]
    [InlineData(1.0, AspectRatioClass.Intermediate)]
    [InlineData(0.99, AspectRatioClass.Squat)]
    [InlineData(0.41, AspectRatioClass.Squat)]
    [InlineData(0.4, AspectRatioClass.Retaining)]
    public void AspectRatioClassesFollowTheStandardsBounds(double ratio, AspectRatioClass expected)
    {
        // Slender ≥ 2, intermediate 1–2, squat 0.4–1, retaining ≤ 0.4 [M, DOMAIN.md §2].
        Assert.Equal(expected, En1991Part4.ClassifyAspectRatio(ratio));
    }

    [Theory]
    // AAC3 > 10 000 t or > 1 000 t with e_o/d_c > 0.25; AAC1 < 100 t; AAC2 otherwise [M, AAC3 V].
    [InlineData(12_000, 0.0, ActionAssessmentClass.AAC3)]
    [InlineData(2_000, 0.3, ActionAssessmentClass.AAC3)]
    [InlineData(2_000, 0.2, ActionAssessmentClass.AAC2)]
    [InlineData(500, 0.3, ActionAssessmentClass.AAC2)]
    [InlineData(99, 0.0, ActionAssessmentClass.AAC1)]
    public void ActionAssessmentClassesFollowCapacityAndEccentricity(double tonnes, double eOverDc, ActionAssessmentClass expected)
    {
        Assert.Equal(expected, En1991Part4.ClassifyAction(tonnes, eOverDc));
    }

    [Fact]
    public void SquatSilosAreRefusedByNameRatherThanGivenSlenderLoads()
    {
        var squat = SiloModel.Create(TestSilos.Circular(10, 6), TestSilos.Wheat());
        Assert.Equal(AspectRatioClass.Squat, squat.AspectRatioClass);
        var ex = Assert.Throws<NotSupportedException>(() => squat.CharacteristicAt(3));
        Assert.Contains("squat", ex.Message, StringComparison.Ordinal);
        Assert.Contains("§5.3", ex.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void RectangularPatchLoadsAndLargeEccentricDischargeAreRefusedByName()
    {
        var bin = SiloModel.Create(TestSilos.Square(4, 10), TestSilos.Wheat());
        var ex = Assert.Throws<NotSupportedException>(() => bin.DischargePatchAt(5));
        Assert.Contains("Square", ex.Message, StringComparison.Ordinal);

        var silo = TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5);
        silo.Geometry.Hopper.OutletEccentricityM = 2.0;
        var eccentric = SiloModel.Create(silo, TestSilos.Wheat());
        var ex2 = Assert.Throws<NotSupportedException>(() => eccentric.DischargePatchAt(5));
        Assert.Contains("large eccentric discharge", ex2.Message, StringComparison.Ordinal);
    }
}
