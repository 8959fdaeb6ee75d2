using SiloWatch.Plant;

namespace SiloWatch.Mechanics;

/// <summary>
/// Shape of the silo's inside: vertical section (circular, square, rectangular) over a flat floor,
/// a conical or pyramidal hopper or a wedge, with the heaped top of central filling.
/// <para>
/// <b>Level datum.</b> A level is measured from the hopper outlet (or the flat floor) up to the highest
/// wall contact of the solid. Above that contact the solid is heaped at its angle of repose φ_r
/// (central filling): a cone in a circular section, a pyramid in a square one and a hipped ridge in a
/// rectangle (slope φ_r towards every wall). Its volume is that of a flat layer of thickness h_o, the
/// equivalent surface: h_o = r·tanφ_r/3 for the cone (EN 1991-4 eq. 5.78 [V, via secondary sources]),
/// a·tanφ_r/6 for the square pyramid [D] and tanφ_r·b(3L − b)/(12L) for the b×L hipped ridge [D].
/// While the heap on a flat floor has not yet reached the wall the level reads 0.
/// </para>
/// </summary>
public sealed class SiloGeometry
{
    private const double Tiny = 1e-12;

    private readonly double _tanRepose;
    private readonly double _tanHopper;

    // Hopper dimensions at the outlet (y = 0), growing by 2·tanβ per metre up to the transition.
    private readonly double _outletWidthM;
    private readonly double _outletLengthM;
    private readonly double _lengthGrowthPerM; // 2·tanβ, or 0 for a wedge whose end walls stay vertical
    private readonly double _hopperVolumeM3;

    public SiloGeometry(GeometryOptions geometry, double angleOfReposeDeg)
    {
        ArgumentNullException.ThrowIfNull(geometry);
        Section = geometry.Section;
        HopperShape = geometry.Hopper.Shape;
        WallHeightM = Positive(geometry.WallHeightM, "WallHeightM");
        if (!(angleOfReposeDeg is >= 0 and < 90))
        {
            throw new ArgumentOutOfRangeException(nameof(angleOfReposeDeg), angleOfReposeDeg, "angle of repose must be in [0, 90) degrees");
        }

        AngleOfReposeDeg = angleOfReposeDeg;
        _tanRepose = Math.Tan(Units.DegToRad(angleOfReposeDeg));
        switch (Section)
        {
            case SectionShape.Circular:
                WidthM = LengthM = Positive(geometry.DiameterM, "DiameterM");
                AreaM2 = Math.PI * WidthM * WidthM / 4.0;
                PerimeterM = Math.PI * WidthM;
                break;
            case SectionShape.Square:
                WidthM = LengthM = Positive(geometry.WidthM, "WidthM");
                AreaM2 = WidthM * WidthM;
                PerimeterM = 4.0 * WidthM;
                break;
            case SectionShape.Rectangular:
                WidthM = Positive(geometry.WidthM, "WidthM");
                LengthM = Positive(geometry.LengthM, "LengthM");
                if (LengthM < WidthM)
                {
                    throw new ArgumentException($"Geometry:LengthM {LengthM} must be the longer side (>= WidthM {WidthM})", nameof(geometry));
                }

                AreaM2 = WidthM * LengthM;
                PerimeterM = 2.0 * (WidthM + LengthM);
                break;
            default:
                throw new NotSupportedException($"section shape '{Section}' is not modelled");
        }

        // EN 1991-4 §1.6 [M?]: d_c is the diameter of a circle, the side of a square and (as taken here) the shorter side of a rectangle.
        CharacteristicDimensionM = WidthM;
        HydraulicRadiusM = AreaM2 / PerimeterM;

        var h = geometry.Hopper;
        if (HopperShape == HopperShape.Flat)
        {
            HopperHeightM = 0;
            HopperHalfAngleDeg = 0;
            OutletM = 0;
        }
        else
        {
            if (!(h.HalfAngleDeg is > 0 and < 90))
            {
                throw new ArgumentOutOfRangeException(nameof(geometry), h.HalfAngleDeg, "Geometry:Hopper:HalfAngleDeg must be between 0 and 90 degrees from the vertical");
            }

            if (!(h.OutletM >= 0 && h.OutletM < WidthM))
            {
                throw new ArgumentOutOfRangeException(nameof(geometry), h.OutletM, "Geometry:Hopper:OutletM must be at least 0 and smaller than the section");
            }

            HopperHalfAngleDeg = h.HalfAngleDeg;
            OutletM = h.OutletM;
            _tanHopper = Math.Tan(Units.DegToRad(h.HalfAngleDeg));
            HopperHeightM = (WidthM - OutletM) / (2.0 * _tanHopper);
            switch (HopperShape)
            {
                case HopperShape.Conical when Section == SectionShape.Circular:
                    _outletWidthM = _outletLengthM = OutletM;
                    _lengthGrowthPerM = 2.0 * _tanHopper;
                    break;
                case HopperShape.Pyramidal when Section != SectionShape.Circular:
                    // Equal slope on all four faces: the outlet of a rectangle is a slot (L − b + o) long.
                    _outletWidthM = OutletM;
                    _outletLengthM = LengthM - WidthM + OutletM;
                    _lengthGrowthPerM = 2.0 * _tanHopper;
                    break;
                case HopperShape.Wedge when Section != SectionShape.Circular:
                    // Slopes on the two long walls only; the end walls stay vertical.
                    _outletWidthM = OutletM;
                    _outletLengthM = LengthM;
                    break;
                default:
                    throw new NotSupportedException($"a {HopperShape} hopper under a {Section} section is not modelled");
            }

            // The apex of the extended hopper lies (outlet/2)/tanβ below the outlet: EN 1991-4 measures x from it.
            HopperApexHeightM = WidthM / (2.0 * _tanHopper);
        }

        _hopperVolumeM3 = HopperVolumeBelow(HopperHeightM);
        MaxLevelM = HopperHeightM + WallHeightM;
        CapacityM3 = _hopperVolumeM3 + AreaM2 * WallHeightM;
        HeapEquivalentHeightM = HeapEquivalentHeight(WidthM, LengthM);
    }

    public SectionShape Section { get; }

    public HopperShape HopperShape { get; }

    /// <summary>Diameter of a circular section, else the shorter side, m.</summary>
    public double WidthM { get; }

    /// <summary>Diameter of a circular section, else the longer side, m.</summary>
    public double LengthM { get; }

    public double WallHeightM { get; }

    public double AreaM2 { get; }

    public double PerimeterM { get; }

    /// <summary>A/U: D/4 circle, a/4 square, ab/(2(a+b)) rectangle [D].</summary>
    public double HydraulicRadiusM { get; }

    /// <summary>d_c of EN 1991-4: diameter, side, or shorter side of a rectangle [M?].</summary>
    public double CharacteristicDimensionM { get; }

    public double AngleOfReposeDeg { get; }

    public double HopperHalfAngleDeg { get; }

    public double OutletM { get; }

    /// <summary>Height from the outlet to the transition, m (0 for a flat floor).</summary>
    public double HopperHeightM { get; }

    /// <summary>Height from the (virtual) apex of the hopper to the transition, m: h_h of EN 1991-4 §6 [M].</summary>
    public double HopperApexHeightM { get; }

    public double HopperVolumeM3 => _hopperVolumeM3;

    /// <summary>Highest level the datum allows: the wall contact at the eaves.</summary>
    public double MaxLevelM { get; }

    /// <summary>Volume to the eaves with a level top, m³.</summary>
    public double CapacityM3 { get; }

    /// <summary>Equivalent-surface height h_o of the heap in the vertical section, m.</summary>
    public double HeapEquivalentHeightM { get; }

    /// <summary>Height of the heap's apex (or ridge) above the highest wall contact in the vertical section, m.</summary>
    public double HeapApexHeightM => 0.5 * WidthM * _tanRepose;

    /// <summary>Height of the transition above the datum (outlet or flat floor), m.</summary>
    public double TransitionLevelM => HopperHeightM;

    /// <summary>Height above the transition of the equivalent flat surface for a level; negative while the solid is all in the hopper.</summary>
    public double EquivalentSurfaceAboveTransitionM(double levelM) =>
        levelM >= HopperHeightM ? levelM - HopperHeightM + HeapEquivalentHeightM : levelM - HopperHeightM;

    /// <summary>Equivalent-surface height of the heap when the highest wall contact is at a level, m.</summary>
    public double HeapEquivalentHeightAt(double levelM)
    {
        if (levelM >= HopperHeightM)
        {
            return HeapEquivalentHeightM;
        }

        var (w, l) = HopperDimensions(Math.Max(0, levelM));
        return HeapEquivalentHeight(w, l);
    }

    /// <summary>Cross-section area at a height above the datum, m².</summary>
    public double AreaAtLevel(double levelM)
    {
        if (levelM >= HopperHeightM)
        {
            return AreaM2;
        }

        var (w, l) = HopperDimensions(levelM);
        return Section == SectionShape.Circular ? Math.PI * w * w / 4.0 : w * l;
    }

    /// <summary>Volume of solid for a level (see the class remarks for the datum), m³.</summary>
    public double VolumeAtLevel(double levelM)
    {
        if (!(levelM >= 0 && levelM <= MaxLevelM + 1e-9))
        {
            throw new ArgumentOutOfRangeException(nameof(levelM), levelM, $"level must be in [0, {MaxLevelM:0.###}] m (outlet or floor to the eaves)");
        }

        if (levelM >= HopperHeightM)
        {
            return _hopperVolumeM3 + AreaM2 * (levelM - HopperHeightM + HeapEquivalentHeightM);
        }

        var (w, l) = HopperDimensions(levelM);
        var area = Section == SectionShape.Circular ? Math.PI * w * w / 4.0 : w * l;
        return HopperVolumeBelow(levelM) + area * HeapEquivalentHeight(w, l);
    }

    /// <summary>Level for a volume; clamped to [0, <see cref="MaxLevelM"/>] (use <see cref="TryLevelAtVolume"/> to know).</summary>
    public double LevelAtVolume(double volumeM3)
    {
        TryLevelAtVolume(volumeM3, out var level);
        return level;
    }

    /// <summary>Level for a volume; false (with the level clamped) when the volume is outside what the datum can hold.</summary>
    public bool TryLevelAtVolume(double volumeM3, out double levelM)
    {
        if (double.IsNaN(volumeM3))
        {
            throw new ArgumentOutOfRangeException(nameof(volumeM3), volumeM3, "volume is not a number");
        }

        var atTransition = VolumeAtLevel(HopperHeightM);
        if (volumeM3 >= atTransition)
        {
            // Prismatic part: closed form.
            levelM = HopperHeightM + (volumeM3 - atTransition) / AreaM2;
            if (levelM > MaxLevelM)
            {
                levelM = MaxLevelM;
                return false;
            }

            return true;
        }

        var atZero = VolumeAtLevel(0);
        if (volumeM3 <= atZero)
        {
            levelM = 0;
            return volumeM3 >= 0;
        }

        // Within the hopper the volume is a monotonic cubic in the level: Newton steps kept inside a shrinking
        // bracket on [0, h_hopper], halving it when a step would leave it [D: safeguarded Newton; the "rtsafe" of
        // Numerical Recipes, from memory]. No delegate: the inventory's hot path inverts floor loads in the hopper.
        double lo = 0, hi = HopperHeightM;
        var y = 0.5 * hi;
        for (var i = 0; i < 200; i++)
        {
            var f = VolumeAtLevel(y) - volumeM3;
            if (f > 0)
            {
                hi = y;
            }
            else
            {
                lo = y;
            }

            if (Math.Abs(f) <= 1e-13 * atTransition || hi - lo <= 1e-13)
            {
                break;
            }

            var slope = VolumeSlopeM2(y);
            var next = slope > 0 ? y - (f / slope) : double.NaN;
            y = next > lo && next < hi ? next : 0.5 * (lo + hi);
        }

        levelM = y;
        return true;
    }

    /// <summary>dV/dlevel at a level, m²: the area at the contact plus the growth of the heap.</summary>
    public double VolumeSlopeM2(double levelM)
    {
        if (levelM >= HopperHeightM)
        {
            return AreaM2;
        }

        const double dy = 1e-6;
        var lo = Math.Max(0, levelM - dy);
        var hi = Math.Min(HopperHeightM, levelM + dy);
        return (VolumeAtLevel(hi) - VolumeAtLevel(lo)) / (hi - lo);
    }

    private (double WidthM, double LengthM) HopperDimensions(double levelM)
    {
        return (_outletWidthM + (2.0 * _tanHopper * levelM), _outletLengthM + (_lengthGrowthPerM * levelM));
    }

    // ∫0^y A(s) ds in closed form: cone π/4·∫(d_o + 2ts)² ds; rectangle ∫(w_o + a·s)(l_o + b·s) ds, b = 0 for a wedge.
    private double HopperVolumeBelow(double levelM)
    {
        if (HopperShape == HopperShape.Flat || levelM <= 0)
        {
            return 0;
        }

        var t = _tanHopper;
        var y = levelM;
        if (Section == SectionShape.Circular)
        {
            var d0 = _outletWidthM;
            var d1 = d0 + 2 * t * y;
            return Math.PI / 4.0 * (d1 * d1 * d1 - d0 * d0 * d0) / (6.0 * t);
        }

        var w0 = _outletWidthM;
        var l0 = _outletLengthM;
        var a = 2.0 * t;
        var b = _lengthGrowthPerM;
        return (w0 * l0 * y) + (((w0 * b) + (l0 * a)) * y * y / 2.0) + (a * b * y * y * y / 3.0);
    }

    // Equivalent-surface height of the heap over a section w×l (w ≤ l; circle when w = l and the section is circular).
    private double HeapEquivalentHeight(double widthM, double lengthM)
    {
        if (widthM <= Tiny)
        {
            return 0;
        }

        if (Section == SectionShape.Circular)
        {
            return 0.5 * widthM * _tanRepose / 3.0; // EN 1991-4 eq. 5.78 [V via secondary sources]: r·tanφ_r/3
        }

        // Hipped ridge of slope φ_r towards all walls [D]: volume tanφ_r·b²(3L − b)/12; square: a·tanφ_r/6.
        var l = Math.Max(lengthM, widthM);
        return _tanRepose * widthM * (3 * l - widthM) / (12.0 * l);
    }

    private static double Positive(double value, string key) =>
        value > 0 && double.IsFinite(value)
            ? value
            : throw new ArgumentOutOfRangeException(key, value, $"Geometry:{key} must be a positive number of metres");
}
