namespace SiloWatch.Mechanics;

/// <summary>
/// Every factor the load rules use, each configurable because most are from memory of EN 1991-4
/// (DOMAIN.md §2 marks them [M?]): check them against your copy of the standard and National Annex.
/// </summary>
public sealed record LoadFactors
{
    /// <summary>Discharge factor for horizontal pressure C_h, slender AAC2/3 [M?]. Default 1.15.</summary>
    public double DischargeHorizontalCh { get; init; } = 1.15;

    /// <summary>Discharge factor for wall friction C_w, slender AAC2/3 [M?]. Default 1.10.</summary>
    public double DischargeFrictionCw { get; init; } = 1.10;

    /// <summary>Leading constant of the discharge patch factor C_pe = 0.42·C_op·(1+2E²)·(1−e^(−1.5(h_c/d_c−1))) [M?]. Default 0.42.</summary>
    public double DischargePatchBase { get; init; } = 0.42;

    /// <summary>Leading constant of the filling patch factor C_pf (same form, E = 2e_f/d_c) [M?]. Default 0.21.</summary>
    public double FillingPatchBase { get; init; } = 0.21;

    /// <summary>The 1.5 in the exponent of the patch factors [M?]. Default 1.5.</summary>
    public double PatchSlendernessCoefficient { get; init; } = 1.5;

    /// <summary>Patch height over d_c: s = π·d_c/16 [M]. Default π/16.</summary>
    public double PatchHeightOverDc { get; init; } = Math.PI / 16.0;

    /// <summary>Hopper filling coefficient b in F_f = 1 − b/(1 + tanβ/μ_h) [M]. Default 0.2.</summary>
    public double HopperFillingB { get; init; } = 0.2;

    /// <summary>e_o/d_c above which discharge is "large eccentric" and needs the flow-channel procedure [M]. Default 0.25.</summary>
    public double LargeEccentricityRatio { get; init; } = 0.25;

    /// <summary>
    /// Form of the hopper stress exponent (differs for wedges only, see <see cref="HopperLoads.PowerN"/>). Default
    /// <see cref="HopperExponentRule.SliceStatics"/>: the expected loads feed the floor-load inversion, which needs equilibrium.
    /// </summary>
    public HopperExponentRule HopperExponent { get; init; } = HopperExponentRule.SliceStatics;

    public static LoadFactors Default { get; } = new();
}
