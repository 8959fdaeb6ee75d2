namespace SiloWatch.Mechanics;

/// <summary>Aspect-ratio classes of EN 1991-4 §1.5 [M].</summary>
public enum AspectRatioClass
{
    /// <summary>h_c/d_c ≤ 0.4.</summary>
    Retaining,

    /// <summary>0.4 &lt; h_c/d_c &lt; 1.0.</summary>
    Squat,

    /// <summary>1.0 ≤ h_c/d_c &lt; 2.0.</summary>
    Intermediate,

    /// <summary>h_c/d_c ≥ 2.0.</summary>
    Slender,
}

/// <summary>Action Assessment Classes of EN 1991-4 §2.5 (Table 2.1) [M, AAC3 V].</summary>
public enum ActionAssessmentClass
{
    AAC1 = 1,
    AAC2 = 2,
    AAC3 = 3,
}

/// <summary>Wall loads at one depth: pressures in kPa, axial wall force per metre of perimeter in kN/m (compression positive).</summary>
public readonly record struct WallLoads(double HorizontalKPa, double WallFrictionKPa, double VerticalKPa, double AxialForceKnPerM);

/// <summary>A patch load on a thin-walled circular silo (discharge C_pe or filling C_pf): p_p·cos θ over a height s [M].</summary>
public readonly record struct PatchLoad(double Factor, double PressureKPa, double HeightM, double EccentricityRatioE);

/// <summary>Equations of EN 1991-4:2006 that the monitoring uses, each with its clause. Characteristic values only.</summary>
public static class En1991Part4
{
    public static AspectRatioClass ClassifyAspectRatio(double hcOverDc) => hcOverDc switch
    {
        >= 2.0 => AspectRatioClass.Slender,
        >= 1.0 => AspectRatioClass.Intermediate,
        > 0.4 => AspectRatioClass.Squat,
        _ => AspectRatioClass.Retaining,
    };

    /// <summary>AAC3 above 10 000 t, or above 1 000 t with e_o/d_c &gt; 0.25; AAC1 below 100 t; AAC2 otherwise [M, AAC3 V].</summary>
    public static ActionAssessmentClass ClassifyAction(double capacityTonnes, double outletEccentricityOverDc, double largeEccentricityRatio = 0.25)
    {
        if (capacityTonnes > 10_000 || (capacityTonnes > 1_000 && outletEccentricityOverDc > largeEccentricityRatio))
        {
            return ActionAssessmentClass.AAC3;
        }

        return capacityTonnes < 100 ? ActionAssessmentClass.AAC1 : ActionAssessmentClass.AAC2;
    }

    /// <summary>z_o = (1/(K·μ))·(A/U) [M, EN 1991-4 eq. 5.5].</summary>
    public static double ZoM(double k, double mu, double hydraulicRadiusM) => hydraulicRadiusM / (k * mu);

    /// <summary>p_ho = γ·K·z_o [M, eq. 5.4].</summary>
    public static double PhoKPa(double unitWeightKnM3, double k, double zoM) => unitWeightKnM3 * k * zoM;

    /// <summary>Y_J(z) = 1 − e^(−z/z_o) [M, eq. 5.6].</summary>
    public static double YJ(double zM, double zoM) => Janssen.OneMinusExpNeg(zM / zoM);

    /// <summary>
    /// Slender-silo filling loads for one property set, §5.2.1.1 [M, high confidence]:
    /// p_hf = p_ho·Y_J (5.1), p_wf = μ·p_ho·Y_J (5.2), p_vf = p_ho/K·Y_J (5.3), n_zSk = μ·p_ho·(z − z_o·Y_J) (5.7).
    /// </summary>
    public static WallLoads SlenderFilling(SolidProperties p, double hydraulicRadiusM, double zM)
    {
        if (zM <= 0)
        {
            return default;
        }

        var zo = ZoM(p.K, p.Mu, hydraulicRadiusM);
        var pho = PhoKPa(p.UnitWeightKnM3, p.K, zo);
        var yj = YJ(zM, zo);
        return new WallLoads(pho * yj, p.Mu * pho * yj, pho / p.K * yj, p.Mu * pho * zo * Janssen.XMinusOneMinusExpNeg(zM / zo));
    }

    /// <summary>Discharge loads on slender silos: p_he = C_h·p_hf, p_we = C_w·p_wf, n_z × C_w [M?]; p_v unchanged.</summary>
    public static WallLoads SlenderDischarge(WallLoads filling, LoadFactors factors) => new(
        filling.HorizontalKPa * factors.DischargeHorizontalCh,
        filling.WallFrictionKPa * factors.DischargeFrictionCw,
        filling.VerticalKPa,
        filling.AxialForceKnPerM * factors.DischargeFrictionCw);

    /// <summary>
    /// Patch factor C_p = base·C_op·(1 + 2E²)·(1 − e^(−1.5(h_c/d_c − 1))), E = 2e/d_c, not below 0 [M?].
    /// base is 0.42 for discharge (C_pe), 0.21 for filling (C_pf).
    /// </summary>
    public static double PatchFactor(double patchBase, double cop, double eccentricityM, double dcM, double hcOverDc, double slendernessCoefficient = 1.5)
    {
        var e = 2.0 * eccentricityM / dcM;
        var c = patchBase * cop * (1 + (2 * e * e)) * (1 - Math.Exp(-slendernessCoefficient * (hcOverDc - 1.0)));
        return Math.Max(0, c);
    }
}
