using SiloWatch.Plant;

namespace SiloWatch.Simulator.Physics;

/// <summary>What the bridges of load cells and strain gauges put out, in mV/V.</summary>
public static class Bridges
{
    /// <summary>
    /// Bridge output v = V_o/V_ex (dimensionless) for a strain ε (tension positive): quarter
    /// GF·ε/(4 + 2·GF·ε), half GF·ε/2, full GF·ε, Poisson full GF·ε·(1+ν)/2 [D, DOMAIN.md §3].
    /// </summary>
    public static double StrainBridgeRatio(BridgeType bridge, double gaugeFactor, double strain, double poissonRatio) => bridge switch
    {
        BridgeType.Quarter => gaugeFactor * strain / (4 + (2 * gaugeFactor * strain)),
        BridgeType.Half => gaugeFactor * strain / 2,
        BridgeType.Full => gaugeFactor * strain,
        BridgeType.Poisson => gaugeFactor * strain * (1 + poissonRatio) / 2,
        _ => throw new ArgumentOutOfRangeException(nameof(bridge), bridge, "unknown bridge type"),
    };

    /// <summary>Strain-gauge bridge output in mV/V.</summary>
    public static double StrainBridgeMvPerV(BridgeType bridge, double gaugeFactor, double strainMicro, double poissonRatio) =>
        1000 * StrainBridgeRatio(bridge, gaugeFactor, strainMicro * 1e-6, poissonRatio);

    /// <summary>
    /// Load-cell output: RO·F/Cap·(1 + SpanTC·ΔT) / SpanFactor + zero + ZeroTC·RO·ΔT, ΔT from the
    /// calibration's reference temperature; coefficients in % per K as on a datasheet [D].
    /// </summary>
    public static double LoadCellMvPerV(SensorOptions cell, double forceKn, double temperatureC, double zeroDriftMvPerV)
    {
        var dT = temperatureC - cell.ReferenceTemperatureC;
        var span = cell.RatedOutputMvPerV * forceKn / cell.CapacityKn * (1 + (cell.SpanTempCoeffPctPerK / 100 * dT)) / cell.SpanFactor;
        var zero = cell.ZeroOffsetMvPerV + zeroDriftMvPerV + (cell.ZeroTempCoeffPctRoPerK / 100 * cell.RatedOutputMvPerV * dT);
        return span + zero;
    }

    /// <summary>
    /// Apparent strain of a gauge from its own thermal output, microstrain: ThermalOutput × (T − T_ref), with
    /// T_ref the gauge's calibration reference temperature (ReferenceTemperatureC; the monitor compensates from the same) [D].
    /// </summary>
    public static double ThermalOutputMicro(double thermalOutputMicroPerK, double temperatureC, double referenceTemperatureC) =>
        thermalOutputMicroPerK * (temperatureC - referenceTemperatureC);
}

/// <summary>Membrane stresses to strains in a thin wall.</summary>
public static class Wall
{
    /// <summary>Biaxial Hooke: ε_z = (σ_z − ν·σ_θ)/E, ε_θ = (σ_θ − ν·σ_z)/E [D].</summary>
    public static (double AxialMicro, double HoopMicro) Strains(double axialKPa, double hoopKPa, double youngsKPa, double poisson) =>
        (1e6 * (axialKPa - (poisson * hoopKPa)) / youngsKPa, 1e6 * (hoopKPa - (poisson * axialKPa)) / youngsKPa);

    /// <summary>σ_z = −n_z/t: friction carried down the wall compresses it [D].</summary>
    public static double AxialStressKPa(double wallFrictionKnPerM, double thicknessM) => -wallFrictionKnPerM / thicknessM;

    /// <summary>σ_θ = p_h·r/t (thin cylinder) [D].</summary>
    public static double HoopStressKPa(double pressureKPa, double radiusM, double thicknessM) => pressureKPa * radiusM / thicknessM;
}

/// <summary>Support reactions of a rigid base on n evenly spaced supports.</summary>
public static class Supports
{
    /// <summary>
    /// R_i = W/n + 2·(W_c·e)·cos(θ_i − θ_e)/(n·R) + 2·M·cos(θ_i − θ_m)/(n·R): statics of n ≥ 3
    /// evenly spaced supports on a circle (Σcos² = n/2) [D]. M acts toward azimuth θ_m (kN·m).
    /// </summary>
    public static double[] Reactions(int count, double radiusM, double firstAngleDeg, double totalKn, double offsetMomentKnM, double offsetAzimuthDeg, double extraMomentKnM, double extraAzimuthDeg)
    {
        var r = new double[count];
        for (var i = 0; i < count; i++)
        {
            var theta = (firstAngleDeg + (360.0 * i / count)) * Math.PI / 180;
            r[i] = (totalKn / count)
                + (2 * offsetMomentKnM * Math.Cos(theta - (offsetAzimuthDeg * Math.PI / 180)) / (count * radiusM))
                + (2 * extraMomentKnM * Math.Cos(theta - (extraAzimuthDeg * Math.PI / 180)) / (count * radiusM));
        }

        return r;
    }
}
