namespace SiloWatch.Mechanics;

public enum InversionStatus
{
    /// <summary>A level was found for the load.</summary>
    Solved,

    /// <summary>The load is zero or negative: empty (or a tare problem).</summary>
    Empty,

    /// <summary>The load is above what the silo carries full to the eaves but below saturation: the level is extrapolated above the eaves (overfill, or the properties are off).</summary>
    AboveFullLevel,

    /// <summary>No solution: the load is above saturation for these properties (A·γ·z0 plus the hopper contents).</summary>
    AboveSaturation,
}

/// <summary>
/// Level and mass from a floor (or hopper) load by inverting Janssen, with the sensitivities the
/// monitoring needs to report uncertainty. Not NaN, not an exception for a normal reading: check <see cref="Status"/>.
/// The <see cref="Message"/> is written when asked for: the inventory inverts on its hot path and allocates nothing there.
/// </summary>
/// <param name="LevelM">Level (datum: see <see cref="SiloGeometry"/>); above the eaves for AboveFullLevel; NaN only for AboveSaturation.</param>
/// <param name="DLevelDLoadMPerKn">d level / d floor load, m per kN (∞ near saturation: badly conditioned).</param>
/// <param name="DLevelDKMuM">d level / d(K·μ) at fixed load, m per unit of K·μ.</param>
/// <param name="SaturationLoadKn">The load an infinitely tall fill would reach with these properties.</param>
public readonly record struct InversionResult(
    InversionStatus Status,
    double LevelM,
    double VolumeM3,
    double MassKg,
    double DLevelDLoadMPerKn,
    double DLevelDKMuM,
    double SaturationLoadKn)
{
    public bool HasLevel => Status is InversionStatus.Solved or InversionStatus.Empty or InversionStatus.AboveFullLevel;

    /// <summary>The floor load that was inverted, kN.</summary>
    public double FloorLoadKn { get; init; }

    /// <summary>The properties it was inverted with.</summary>
    public SolidProperties Properties { get; init; }

    /// <summary>The highest level of the silo (to the eaves), m.</summary>
    public double MaxLevelM { get; init; }

    /// <summary>What the operator should know: empty, no solution, or above the eaves; empty text for a plain solution.</summary>
    public string Message => Status switch
    {
        InversionStatus.Empty => "no load on the floor: empty (or check the tare)",
        InversionStatus.AboveSaturation =>
            $"no solution: the load {FloorLoadKn:0.#} kN is above saturation for these properties ({SaturationLoadKn:0.#} kN with γ {Properties.UnitWeightKnM3:0.##} kN/m3, K·μ {Properties.KMu:0.###}); check K·μ, the unit weight and the load cells",
        InversionStatus.AboveFullLevel =>
            $"the load is above the expected load full to the eaves: the level {LevelM:0.##} m is above the eaves ({MaxLevelM:0.##} m): overfill, or the properties are off",
        _ => "",
    };
}
