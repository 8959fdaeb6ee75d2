using SiloWatch.Plant;

namespace SiloWatch.Mechanics;

/// <summary>Which form of the hopper stress exponent n the model uses (they differ for wedge hoppers only).</summary>
public enum HopperExponentRule
{
    /// <summary>The slice equilibrium of the hopper: the expected loads balance the weight of the contents.</summary>
    SliceStatics,

    /// <summary>The standard's form as written, for reproducing its characteristic wedge-hopper pressures.</summary>
    En1991Part4,
}

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
    /// The exponent n of the hopper stress. <see cref="HopperExponentRule.SliceStatics"/> (default):
    /// n = S·(F·μ_h·cotβ + F − 1) [D: slice equilibrium, d(A·p_v)/dx with A'/A = S/x]. <see cref="HopperExponentRule.En1991Part4"/>:
    /// n = S·(F·μ_h·cotβ + F) − 2 [M: EN 1991-4:2006 §6.3.2, from memory; DOMAIN.md §1]. The two agree for cones and
    /// pyramids (S = 2). For a wedge (S = 1) the standard's form is 1 lower than the statics of plane flow (a wedge's
    /// section narrows in one direction only, so A'/A = 1/x and the area term contributes −1, not −2): it carries more
    /// of the transition's stress down and gives higher, conservative hopper pressures, but its p_v does not balance
    /// the weight of the contents.
    /// </summary>
    public static double PowerN(double s, double f, double mu, double tanBeta, HopperExponentRule rule = HopperExponentRule.SliceStatics) =>
        rule == HopperExponentRule.En1991Part4
            ? (s * ((f * mu / tanBeta) + f)) - 2.0
            : s * ((f * mu / tanBeta) + f - 1.0);

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
