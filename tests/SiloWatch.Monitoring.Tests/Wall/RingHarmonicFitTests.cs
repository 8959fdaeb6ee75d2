using MathNet.Numerics;
using MathNet.Numerics.LinearAlgebra;
using MathNet.Numerics.LinearRegression;
using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests.Wall;

public sealed class RingHarmonicFitTests
{
    private static double Rad(double deg) => deg * Math.PI / 180;

    [Fact]
    public void TheFitMatchesMathNetLeastSquaresOnTheSameBasisWithAFailedGaugeAndUnequalSpacing()
    {
        // Reference: MathNet Fit.LinearCombination and MultipleRegression.QR on [1, cos θ, sin θ, cos 2θ, sin 2θ].
        double[] deg = [0, 47, 95, 150, 181, 233, 290, 331];
        var values = deg.Select((d, i) => -80 + (12 * Math.Cos(Rad(d) - 0.4)) + (5 * Math.Cos(2 * (Rad(d) - 1.1))) + (i % 3 == 0 ? 0.9 : -0.6)).ToArray();
        var fit = new RingHarmonicFit(deg, maxOrder: 2);
        var good = fit.AllGauges & ~(1UL << 3); // gauge at 150° failed
        var coefficients = new double[5];

        var order = fit.Fit(values, good, coefficients);

        var keptAngles = deg.Where((_, i) => i != 3).Select(Rad).ToArray();
        var keptValues = values.Where((_, i) => i != 3).ToArray();
        var reference = Fit.LinearCombination(keptAngles, keptValues, _ => 1.0, Math.Cos, Math.Sin, t => Math.Cos(2 * t), t => Math.Sin(2 * t));
        var x = Matrix<double>.Build.Dense(keptAngles.Length, 5, (i, j) => j switch
        {
            0 => 1,
            1 => Math.Cos(keptAngles[i]),
            2 => Math.Sin(keptAngles[i]),
            3 => Math.Cos(2 * keptAngles[i]),
            _ => Math.Sin(2 * keptAngles[i]),
        });
        var qr = MultipleRegression.QR(x, Vector<double>.Build.DenseOfArray(keptValues));
        Assert.Equal(2, order);
        for (var j = 0; j < 5; j++)
        {
            Assert.Equal(reference[j], coefficients[j], 9);
            Assert.Equal(qr[j], coefficients[j], 9);
        }
    }

    [Fact]
    public void ASyntheticPatternIsRecoveredExactlyWithItsAmplitudesAndDirections()
    {
        // v(θ) = −95 + 14·cos(θ − 220°) + 6·cos(2(θ − 35°)): directions 220° and 35° (or 215°) from the reference mark [D].
        double[] deg = [0, 45, 90, 135, 180, 225, 270, 315];
        var values = deg.Select(d => -95 + (14 * Math.Cos(Rad(d - 220))) + (6 * Math.Cos(2 * Rad(d - 35)))).ToArray();
        var fit = new RingHarmonicFit(deg, maxOrder: 3);
        var c = new double[7];

        var order = fit.Fit(values, fit.AllGauges, c);
        var h = RingHarmonicFit.Harmonics(c, order);

        Assert.Equal(3, order);
        Assert.Equal(-95, h[0].Amplitude, 9);
        Assert.Equal(14, h[1].Amplitude, 9);
        Assert.Equal(220, h[1].DirectionDeg, 9);
        Assert.Equal(6, h[2].Amplitude, 9);
        Assert.Equal(35, h[2].DirectionDeg, 9);
        Assert.Equal(0, h[3].Amplitude, 9);
    }

    [Fact]
    public void EqualSpacingReducesToTheDiscreteFourierSums()
    {
        // DOMAIN.md §4 [D]: a_n = (2/N)Σ v cos nθ, b_n = (2/N)Σ v sin nθ for equally spaced gauges.
        double[] deg = [10, 70, 130, 190, 250, 310];
        var values = new[] { 3.0, -1.5, 7.25, 0.5, -4.0, 2.0 };
        var fit = new RingHarmonicFit(deg, maxOrder: 2);
        var c = new double[5];
        fit.Fit(values, fit.AllGauges, c);

        var a1 = 2.0 / 6 * deg.Select((d, i) => values[i] * Math.Cos(Rad(d))).Sum();
        var b2 = 2.0 / 6 * deg.Select((d, i) => values[i] * Math.Sin(2 * Rad(d))).Sum();
        Assert.Equal(values.Average(), c[0], 9);
        Assert.Equal(a1, c[1], 9);
        Assert.Equal(b2, c[4], 9);
    }

    [Fact]
    public void TheEn1991DischargePatchIsRecoveredAsTheFirstHarmonicWithItsFactor()
    {
        // EN 1991-4 §5.2.2.2, thin circular wall: p(θ) = p_he + p_pe·cos θ with p_pe = C_pe·p_he [M: from memory].
        // Hoop strain ∝ hoop pressure, so the ring's A1/A0 is C_pe and φ1 is the patch centre.
        var model = DemoPlant.Model("S1");
        var patch = model.DischargePatchAt(12.0);
        var pHe = model.CharacteristicAt(12.0).Discharge.HorizontalKPa;
        double[] deg = [0, 60, 120, 180, 240, 300];
        var r = 0.5 * model.Geometry.WidthM;
        var tE = model.Silo.Geometry.WallThicknessM * model.Silo.Geometry.WallYoungsModulusGPa;
        var strains = deg.Select(d => (pHe + (patch.PressureKPa * Math.Cos(Rad(d - 120)))) * r / tE).ToArray();
        var fit = new RingHarmonicFit(deg, maxOrder: 2);
        var c = new double[5];

        var h = RingHarmonicFit.Harmonics(c, fit.Fit(strains, fit.AllGauges, c));

        Assert.True(patch.Factor > 0);
        Assert.Equal(patch.Factor, h[1].Amplitude / h[0].Amplitude, 9);
        Assert.Equal(120, h[1].DirectionDeg, 6);
        Assert.Equal(0, h[2].Amplitude, 9);
    }

    [Fact]
    public void HarmonicsTheRemainingGaugesCannotResolveAreRefused()
    {
        // N ≥ 2·n_max + 1 [D, DOMAIN.md §4].
        double[] deg = [0, 60, 120, 180, 240, 300];
        var fit = new RingHarmonicFit(deg, maxOrder: 2);
        var c = new double[5];
        var values = new double[6];

        Assert.Equal(2, fit.ResolvedOrder(fit.AllGauges));
        Assert.Equal(2, fit.ResolvedOrder(0b111110));         // five left: 5 ≥ 2·2 + 1
        Assert.Equal(1, fit.ResolvedOrder(0b011110));         // four left: only n = 1
        Assert.Equal(0, fit.ResolvedOrder(0b000110));         // two left: the mean only
        Assert.Equal(-1, fit.Fit(values, 0, c));              // none left
        Assert.All(c, x => Assert.True(double.IsNaN(x)));
        Assert.Equal(1, fit.Fit(values, 0b011110, c));
        Assert.True(double.IsNaN(c[3]) && double.IsNaN(c[4]));
    }

    [Fact]
    public void GaugesBunchedOnOneSideAreRefusedAsIllConditioned()
    {
        // Five gauges within 40°: enough of them for n = 2 by count, but the basis is nearly dependent.
        var fit = new RingHarmonicFit([0, 10, 20, 30, 40], maxOrder: 2, maxConditionNumber: 20);
        Assert.True(fit.ResolvedOrder(fit.AllGauges) < 2);
        Assert.True(fit.ConditionNumber(fit.AllGauges) <= 20);
    }

    [Fact]
    public void DirectionsAreGivenFrom0To360Degrees()
    {
        Assert.Equal(270, Harmonic.FromCoefficients(1, 0, -1).DirectionDeg, 9);
        Assert.Equal(315, Harmonic.FromCoefficients(2, 0, -1).DirectionDeg, 9); // atan2(−1, 0)/2 = −45°: one of the two maxima
    }
}
