using SiloWatch.Plant;

namespace SiloWatch.Mechanics;

/// <summary>Mean wall friction coefficient μ_m of a solid against each wall category (EN 1991-4 Table E.1 columns).</summary>
/// <param name="D4">Effective value for corrugated walls; the standard derives it from the internal friction angle
/// (EN 1991-4 D.2 [M]), which the library does not hold, so it must be given explicitly if a D4 wall is used.</param>
public sealed record WallFriction(double D1, double D2, double D3, double? D4 = null)
{
    public double For(WallCategory category) => category switch
    {
        WallCategory.D1 => D1,
        WallCategory.D2 => D2,
        WallCategory.D3 => D3,
        WallCategory.D4 => D4 ?? throw new NotSupportedException(
            "wall category D4 (corrugated): the effective wall friction (EN 1991-4 D.2) needs the internal friction angle; give WallFrictionMean.D4 in the material library"),
        _ => throw new ArgumentOutOfRangeException(nameof(category), category, "unknown wall category"),
    };
}

/// <summary>Which extreme of the characteristic property range to take (EN 1991-4 Table 3.1 [M]).</summary>
public enum PropertyCase
{
    /// <summary>Mean values K_m, μ_m and the mid unit weight: the best estimate, used for monitoring expectations.</summary>
    Mean,

    /// <summary>Maximum normal wall pressure: μ lower, K upper, γ upper.</summary>
    MaxNormalWallPressure,

    /// <summary>Maximum wall friction (axial wall force): μ upper, K upper, γ upper.</summary>
    MaxWallFriction,

    /// <summary>Maximum vertical load on the floor or hopper: μ lower, K lower, γ upper.</summary>
    MaxFloorLoad,
}

/// <summary>The three numbers Janssen needs: unit weight, lateral pressure ratio K and wall friction μ.</summary>
public readonly record struct SolidProperties(double UnitWeightKnM3, double K, double Mu)
{
    public double KMu => K * Mu;

    /// <summary>Bulk density in kg/m³ from the unit weight (γ = ρ·g).</summary>
    public double BulkDensityKgM3 => UnitWeightKnM3 * 1000.0 / Units.StandardGravity;

    /// <summary>The same solid with a different K·μ (K kept, μ scaled): for sensitivities and calibration.</summary>
    public SolidProperties WithKMu(double kMu) => this with { Mu = kMu / K };
}

/// <summary>
/// A stored solid as listed in the material library: characteristic ranges after EN 1991-4 §4.2 and
/// Annex E. Every value's provenance is in <see cref="Source"/> and <see cref="Confidence"/>.
/// </summary>
public sealed record Material(
    string Name,
    string Description,
    double UnitWeightLowerKnM3,
    double UnitWeightUpperKnM3,
    double AngleOfReposeDeg,
    double KMean,
    double KFactor,
    WallFriction WallFrictionMean,
    double WallFrictionFactor,
    double PatchFactorCop,
    string Source,
    string Confidence)
{
    // EN 1991-4 §4.2.3 [V]: X_u = a_X·X_m, X_l = X_m / a_X.
    public double KUpper => KFactor * KMean;

    public double KLower => KMean / KFactor;

    public double MuMean(WallCategory wall) => WallFrictionMean.For(wall);

    public double MuUpper(WallCategory wall) => WallFrictionFactor * WallFrictionMean.For(wall);

    public double MuLower(WallCategory wall) => WallFrictionMean.For(wall) / WallFrictionFactor;

    /// <summary>Mid value of the unit weight range: the monitoring best estimate until calibrated [D: a choice, not a code value].</summary>
    public double UnitWeightMeanKnM3 => 0.5 * (UnitWeightLowerKnM3 + UnitWeightUpperKnM3);

    public double AngleOfReposeRad => AngleOfReposeDeg * Math.PI / 180.0;

    /// <summary>Properties for one case of EN 1991-4 Table 3.1 [M]; the code cases use the upper unit weight (§4.2.2 [M]).</summary>
    public SolidProperties Properties(PropertyCase propertyCase, WallCategory wall) => propertyCase switch
    {
        PropertyCase.Mean => new(UnitWeightMeanKnM3, KMean, MuMean(wall)),
        PropertyCase.MaxNormalWallPressure => new(UnitWeightUpperKnM3, KUpper, MuLower(wall)),
        PropertyCase.MaxWallFriction => new(UnitWeightUpperKnM3, KUpper, MuUpper(wall)),
        PropertyCase.MaxFloorLoad => new(UnitWeightUpperKnM3, KLower, MuLower(wall)),
        _ => throw new ArgumentOutOfRangeException(nameof(propertyCase), propertyCase, "unknown property case"),
    };
}
