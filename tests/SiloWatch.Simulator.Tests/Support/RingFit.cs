namespace SiloWatch.Simulator.Tests.Support;

/// <summary>
/// Least-squares fit of ε(θ) = A0 + a1·cosθ + b1·sinθ + a2·cos2θ + b2·sin2θ on a ring's gauges
/// [D, DOMAIN.md §4]; written here independently of the service's ring analysis.
/// </summary>
public static class RingFit
{
    public static (double A0, double A1, double PhaseDeg) FirstHarmonic(IReadOnlyList<double> anglesDeg, IReadOnlyList<double> values)
    {
        // Normal equations of the 5-term basis, solved with MathNet (an outside linear-algebra library).
        var n = anglesDeg.Count;
        var x = MathNet.Numerics.LinearAlgebra.Matrix<double>.Build.Dense(n, 5);
        var y = MathNet.Numerics.LinearAlgebra.Vector<double>.Build.Dense(n);
        for (var k = 0; k < n; k++)
        {
            var t = anglesDeg[k] * Math.PI / 180;
            x[k, 0] = 1;
            x[k, 1] = Math.Cos(t);
            x[k, 2] = Math.Sin(t);
            x[k, 3] = Math.Cos(2 * t);
            x[k, 4] = Math.Sin(2 * t);
            y[k] = values[k];
        }

        var c = x.Solve(y);
        var phase = Math.Atan2(c[2], c[1]) * 180 / Math.PI;
        return (c[0], Math.Sqrt((c[1] * c[1]) + (c[2] * c[2])), phase < 0 ? phase + 360 : phase);
    }

    /// <summary>Second harmonic: amplitude and the azimuth of one of its two maxima (0..180°).</summary>
    public static (double A2, double PhaseDeg) SecondHarmonic(IReadOnlyList<double> anglesDeg, IReadOnlyList<double> values)
    {
        var n = anglesDeg.Count;
        double a = 0, b = 0;
        for (var k = 0; k < n; k++)
        {
            var t = 2 * anglesDeg[k] * Math.PI / 180;
            a += 2.0 / n * values[k] * Math.Cos(t);
            b += 2.0 / n * values[k] * Math.Sin(t);
        }

        // φ2 = atan2(b2, a2)/2 [D, DOMAIN.md §4]; equal spacing, so the sums are the least-squares fit.
        var phase = Math.Atan2(b, a) * 90 / Math.PI;
        return (Math.Sqrt((a * a) + (b * b)), phase < 0 ? phase + 180 : phase);
    }

    /// <summary>Smallest angle between two azimuths, degrees (0..180).</summary>
    public static double AngleBetween(double a, double b)
    {
        var d = Math.Abs(((a - b) % 360 + 360) % 360);
        return d > 180 ? 360 - d : d;
    }
}

/// <summary>Turns bridge outputs back into strain, by the inverse of the bridge equations [D, DOMAIN.md §3].</summary>
public static class BridgeInverse
{
    /// <summary>Quarter bridge: ε = 4v/(GF·(1 − 2v)).</summary>
    public static double QuarterMicro(double mvPerV, double gaugeFactor)
    {
        var v = mvPerV / 1000;
        return 1e6 * 4 * v / (gaugeFactor * (1 - (2 * v)));
    }

    /// <summary>Full bridge: ε = v/GF.</summary>
    public static double FullMicro(double mvPerV, double gaugeFactor) => 1e6 * mvPerV / 1000 / gaugeFactor;
}
