using SiloWatch.Plant;

namespace SiloWatch.Mechanics;

/// <summary>
/// Walker-type hopper stresses in the form EN 1991-4 §6.3 uses [D; Walker 1966; structure of §6 from memory, M].
/// x is measured up from the (virtual) apex of the hopper; h is the apex-to-surface height
/// (the transition when the vertical section is filled); p_n = F·p_v on the hopper wall.
/// </summary>
public static class HopperLoads
{
    /// <summary>Steep hopper if tanβ &lt; (1 − K)/(2·μ_h), with K of the vertical walls and μ_h of the hopper, both lower values [V, EN 1991-4 eq. 6.1].</summary>
    public static bool IsSteep(double tanBeta, double kLower, double muHopperLower) => tanBeta < (1.0 - kLower) / (2.0 * muHopperLower);

    /// <summary>S = 2 for a cone or pyramid, 1 for a wedge [M].</summary>
    public static double ShapeFactorS(HopperShape shape) => shape switch
    {
        HopperShape.Conical or HopperShape.Pyramidal => 2.0,
        HopperShape.Wedge => 1.0,
        _ => throw new NotSupportedException($"hopper shape '{shape}' has no hopper loads"),
    };

    /// <summary>F_f = 1 − b/(1 + tanβ/μ_h), b = 0.2 [M]: filling, steep hopper.</summary>
    public static double FillingF(double tanBeta, double mu, double b = 0.2) => 1.0 - (b / (1.0 + (tanBeta / mu)));

    /// <summary>Mobilised friction of a shallow hopper μ_heff = (1 − K)/(2·tanβ) [M?]: friction not fully mobilised.</summary>
    public static double MobilisedFriction(double k, double tanBeta) => (1.0 - k) / (2.0 * tanBeta);

    /// <summary>
    /// n = S·(F·μ_h·cotβ + F − 1) [D: slice equilibrium of the hopper]. For cones and pyramids (S = 2) this is
    /// DOMAIN.md's S·(F·μ_h·cotβ + F) − 2; for a wedge (S = 1) statics gives −1, not −2 (tested against an
    /// integration of the slice equilibrium): check the wedge against your copy of EN 1991-4 §6.3.
    /// </summary>
    public static double PowerN(double s, double f, double mu, double tanBeta) => s * ((f * mu / tanBeta) + f - 1.0);

    /// <summary>p_v(x) = (γ·h/(n−1))·[(x/h) − (x/h)^n] + p_vft·(x/h)^n [D; EN 1991-4 §6.3 form, M].</summary>
    public static double VerticalStressKPa(double unitWeightKnM3, double hM, double xM, double n, double topStressKPa)
    {
        if (xM <= 0)
        {
            return 0;
        }

        var r = xM / hM;
        var rn = Math.Pow(r, n);
        // n → 1: the bracket over (n − 1) tends to −r·ln r.
        var body = Math.Abs(n - 1.0) < 1e-9 ? -unitWeightKnM3 * hM * r * Math.Log(r) : unitWeightKnM3 * hM / (n - 1.0) * (r - rn);
        return body + (topStressKPa * rn);
    }
}
