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
    double SaturationLoadKn,
    string Message)
{
    public bool HasLevel => Status is InversionStatus.Solved or InversionStatus.Empty or InversionStatus.AboveFullLevel;
}
