namespace SiloWatch.Monitoring;

/// <summary>
/// Least-squares fit of v(θ) = c0 + a·cosθ + b·sinθ to the gauges of one ring (any spacing, a
/// failed gauge left out) [D: DOMAIN.md §4 on the same basis]. Normal equations, 3×3, no allocation.
/// </summary>
public static class RingFit
{
    /// <summary>Fits the first harmonic; false when fewer than 3 points or the angles do not determine it.</summary>
    public static bool TryFit(ReadOnlySpan<double> anglesRad, ReadOnlySpan<double> values, out double c0, out double a1, out double b1)
    {
        c0 = a1 = b1 = 0;
        if (anglesRad.Length != values.Length || values.Length < 3)
        {
            return false;
        }

        double s11 = 0, s1c = 0, s1s = 0, scc = 0, scs = 0, sss = 0, y1 = 0, yc = 0, ys = 0;
        for (var i = 0; i < values.Length; i++)
        {
            var c = Math.Cos(anglesRad[i]);
            var s = Math.Sin(anglesRad[i]);
            var v = values[i];
            s11 += 1;
            s1c += c;
            s1s += s;
            scc += c * c;
            scs += c * s;
            sss += s * s;
            y1 += v;
            yc += v * c;
            ys += v * s;
        }

        // Cramer's rule on the symmetric normal matrix [[s11, s1c, s1s], [s1c, scc, scs], [s1s, scs, sss]].
        var det = (s11 * ((scc * sss) - (scs * scs))) - (s1c * ((s1c * sss) - (scs * s1s))) + (s1s * ((s1c * scs) - (scc * s1s)));
        if (Math.Abs(det) < 1e-9 * s11 * s11 * s11)
        {
            return false;
        }

        c0 = ((y1 * ((scc * sss) - (scs * scs))) - (s1c * ((yc * sss) - (scs * ys))) + (s1s * ((yc * scs) - (scc * ys)))) / det;
        a1 = ((s11 * ((yc * sss) - (ys * scs))) - (y1 * ((s1c * sss) - (scs * s1s))) + (s1s * ((s1c * ys) - (yc * s1s)))) / det;
        b1 = ((s11 * ((scc * ys) - (scs * yc))) - (s1c * ((s1c * ys) - (yc * s1s))) + (y1 * ((s1c * scs) - (scc * s1s)))) / det;
        return true;
    }
}
