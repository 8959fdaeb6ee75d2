namespace SiloWatch.Mechanics;

/// <summary>
/// Janssen's slice model for a vertical prismatic silo, closed forms (DOMAIN.md §1; Janssen 1895;
/// Nedderman ch. 3). Depth z is measured down from the equivalent flat surface; q0 is a uniform
/// vertical surcharge on that surface. Units: kN/m³, kPa, m, kN/m.
/// </summary>
public static class Janssen
{
    /// <summary>z0 = A/(K·μ·U) = (A/U)/(K·μ) [D, Janssen].</summary>
    public static double CharacteristicDepthM(double hydraulicRadiusM, double kMu) => hydraulicRadiusM / kMu;

    /// <summary>p_v(z) = γ·z0·(1 − e^(−z/z0)) + q0·e^(−z/z0) [D, Janssen].</summary>
    public static double VerticalStressKPa(double unitWeightKnM3, double z0M, double depthM, double surchargeKPa = 0)
    {
        if (depthM <= 0)
        {
            return depthM == 0 ? surchargeKPa : 0;
        }

        var x = depthM / z0M;
        return (unitWeightKnM3 * z0M * OneMinusExpNeg(x)) + (surchargeKPa * Math.Exp(-x));
    }

    /// <summary>p_h = K·p_v [D, Janssen].</summary>
    public static double HorizontalStressKPa(double k, double verticalKPa) => k * verticalKPa;

    /// <summary>τ_w = μ·K·p_v [D, Janssen].</summary>
    public static double WallShearKPa(double kMu, double verticalKPa) => kMu * verticalKPa;

    /// <summary>
    /// Wall friction accumulated per metre of perimeter from the surface to depth z:
    /// n_z = (A/U)·[γ·z − (γ·z0 − q0)·(1 − e^(−z/z0))] [D: ∫ μ·K·p_v dz].
    /// </summary>
    public static double WallFrictionForceKnPerM(double unitWeightKnM3, double z0M, double hydraulicRadiusM, double depthM, double surchargeKPa = 0)
    {
        if (depthM <= 0)
        {
            return 0;
        }

        var x = depthM / z0M;
        // γ·z − γ·z0·(1−e^(−x)) = γ·z0·(x − 1 + e^(−x)): evaluated without cancellation for shallow depths.
        return hydraulicRadiusM * ((unitWeightKnM3 * z0M * XMinusOneMinusExpNeg(x)) + (surchargeKPa * OneMinusExpNeg(x)));
    }

    /// <summary>Saturation vertical stress p_v∞ = γ·z0 [D].</summary>
    public static double SaturationVerticalStressKPa(double unitWeightKnM3, double z0M) => unitWeightKnM3 * z0M;

    /// <summary>Floor share of the weight f = (1 − e^(−x))/x, x = H/z0 [D].</summary>
    public static double FloorShare(double depthOverZ0) =>
        depthOverZ0 <= 0 ? 1.0 : OneMinusExpNeg(depthOverZ0) / depthOverZ0;

    /// <summary>1 − e^(−x), accurate for small x.</summary>
    public static double OneMinusExpNeg(double x)
    {
        if (Math.Abs(x) < 1e-4)
        {
            return x * (1 - (x / 2 * (1 - (x / 3 * (1 - (x / 4))))));
        }

        return 1 - Math.Exp(-x);
    }

    /// <summary>x − 1 + e^(−x), accurate for small x (series x²/2 − x³/6 + …).</summary>
    public static double XMinusOneMinusExpNeg(double x)
    {
        if (Math.Abs(x) < 1e-2)
        {
            var x2 = x * x;
            return x2 * (0.5 - (x / 6 * (1 - (x / 4 * (1 - (x / 5 * (1 - (x / 6))))))));
        }

        return x - OneMinusExpNeg(x);
    }
}
