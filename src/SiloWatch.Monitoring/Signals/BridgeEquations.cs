using SiloWatch.Plant;

namespace SiloWatch.Monitoring;

/// <summary>
/// Wheatstone bridge output against strain, with v = V_o / V_ex (dimensionless) and strain
/// dimensionless; tension positive. Equations after DOMAIN.md §3 [D], which match the usual
/// strain-gauge handbook forms (quarter bridge with its non-linearity; half, full, Poisson full)
/// [M: from memory of the common strain-gauge bridge tables].
/// </summary>
public static class BridgeEquations
{
    /// <summary>Strain from the bridge ratio v for the given arrangement.</summary>
    /// <param name="poissonRatio">Poisson's ratio of the part the gauges are bonded to (Poisson bridge only).</param>
    public static double Strain(BridgeType bridge, double ratio, double gaugeFactor, double poissonRatio = 0.3) => bridge switch
    {
        // Quarter bridge, exact: v = GF·ε/(4 + 2·GF·ε)  ⇒  ε = 4v / (GF·(1 − 2v))  [D, DOMAIN.md §3]
        BridgeType.Quarter => 4.0 * ratio / (gaugeFactor * (1.0 - 2.0 * ratio)),
        // Half bridge, two active arms of opposite sense: v = GF·ε/2  [D]
        BridgeType.Half => 2.0 * ratio / gaugeFactor,
        // Full bridge, four active arms: v = GF·ε  [D]
        BridgeType.Full => ratio / gaugeFactor,
        // Poisson full bridge (two axial, two transverse): v = GF·ε·(1 + ν)/2  [D]
        BridgeType.Poisson => 2.0 * ratio / (gaugeFactor * (1.0 + poissonRatio)),
        _ => throw new ArgumentOutOfRangeException(nameof(bridge), bridge, "unknown bridge type"),
    };

    /// <summary>Bridge ratio v for a strain: the forward equations (simulation, tests, range checks).</summary>
    public static double Ratio(BridgeType bridge, double strain, double gaugeFactor, double poissonRatio = 0.3) => bridge switch
    {
        BridgeType.Quarter => gaugeFactor * strain / (4.0 + 2.0 * gaugeFactor * strain),
        BridgeType.Half => gaugeFactor * strain / 2.0,
        BridgeType.Full => gaugeFactor * strain,
        BridgeType.Poisson => gaugeFactor * strain * (1.0 + poissonRatio) / 2.0,
        _ => throw new ArgumentOutOfRangeException(nameof(bridge), bridge, "unknown bridge type"),
    };

    /// <summary>Microstrain from the transmitted signal in mV/V (1 mV/V is v = 1e-3).</summary>
    public static double StrainMicroFromMvPerV(BridgeType bridge, double signalMvPerV, double gaugeFactor, double poissonRatio = 0.3) =>
        Strain(bridge, signalMvPerV * 1e-3, gaugeFactor, poissonRatio) * 1e6;

    /// <summary>Signal in mV/V for a strain in microstrain.</summary>
    public static double MvPerVFromStrainMicro(BridgeType bridge, double strainMicro, double gaugeFactor, double poissonRatio = 0.3) =>
        Ratio(bridge, strainMicro * 1e-6, gaugeFactor, poissonRatio) * 1e3;
}
