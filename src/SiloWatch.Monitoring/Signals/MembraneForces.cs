namespace SiloWatch.Monitoring;

/// <summary>Membrane stresses and forces per metre in a thin wall from a biaxial gauge pair.</summary>
public static class MembraneForces
{
    // Plane stress, Hooke's law: σ_z = E/(1−ν²)(ε_z + ν ε_θ), σ_θ = E/(1−ν²)(ε_θ + ν ε_z)  [D, DOMAIN.md §3; textbook elasticity]
    // Microstrain times GPa gives kPa (1e-6 · 1e6 kPa).

    /// <summary>Axial (meridional) membrane stress, kPa; tension positive.</summary>
    public static double AxialStressKPa(double axialStrainMicro, double hoopStrainMicro, double youngsModulusGPa, double poissonRatio) =>
        youngsModulusGPa / (1.0 - poissonRatio * poissonRatio) * (axialStrainMicro + poissonRatio * hoopStrainMicro);

    /// <summary>Hoop (circumferential) membrane stress, kPa; tension positive.</summary>
    public static double HoopStressKPa(double axialStrainMicro, double hoopStrainMicro, double youngsModulusGPa, double poissonRatio) =>
        youngsModulusGPa / (1.0 - poissonRatio * poissonRatio) * (hoopStrainMicro + poissonRatio * axialStrainMicro);

    /// <summary>Axial stress when only the axial strain is measured and the hoop stress is known otherwise:
    /// from ε_z = (σ_z − ν σ_θ)/E  ⇒  σ_z = E ε_z + ν σ_θ  [D, plane stress].</summary>
    public static double AxialStressFromAxialStrainKPa(double axialStrainMicro, double hoopStressKPa, double youngsModulusGPa, double poissonRatio) =>
        youngsModulusGPa * axialStrainMicro + poissonRatio * hoopStressKPa;

    /// <summary>Membrane force per metre of wall, kN/m: n = σ·t.</summary>
    public static double ForcePerMetreKnPerM(double stressKPa, double thicknessM) => stressKPa * thicknessM;

    /// <summary>Hoop pressure on a thin circular wall from its hoop force, kPa: p_h ≈ n_θ / r  [D, thin-shell membrane].</summary>
    public static double HoopPressureKPa(double hoopForceKnPerM, double radiusM) => hoopForceKnPerM / radiusM;
}
