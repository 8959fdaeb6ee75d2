using SiloWatch.Plant;

namespace SiloWatch.Simulator.Physics;

/// <summary>
/// The simulator's own view of a silo's geometry: section, hopper and the heaped top, with the
/// volume ↔ surface relation. Heights are measured up from the transition (or flat floor); inside
/// the hopper x is measured up from the (virtual) apex.
/// </summary>
public sealed class SiloShape
{
    public SiloShape(GeometryOptions g, double angleOfReposeDeg)
    {
        Section = g.Section;
        switch (g.Section)
        {
            case SectionShape.Circular:
                AreaM2 = Math.PI * g.DiameterM * g.DiameterM / 4;
                PerimeterM = Math.PI * g.DiameterM;
                HalfSpanM = g.DiameterM / 2;
                // Centred cone at the angle of repose: height r·tanφ, volume A·h/3 [D].
                HeapPeakM = HalfSpanM * Math.Tan(angleOfReposeDeg * Math.PI / 180);
                break;
            case SectionShape.Square:
                AreaM2 = g.WidthM * g.WidthM;
                PerimeterM = 4 * g.WidthM;
                HalfSpanM = g.WidthM / 2;
                // Square pyramid over the section: height (a/2)·tanφ, volume A·h/3 [D].
                HeapPeakM = HalfSpanM * Math.Tan(angleOfReposeDeg * Math.PI / 180);
                break;
            default:
                AreaM2 = g.WidthM * g.LengthM;
                PerimeterM = 2 * (g.WidthM + g.LengthM);
                HalfSpanM = g.WidthM / 2;
                // Ridge along the long side: a prism of height (b/2)·tanφ, volume A·h/2 [D]; kept as an equivalent cone height.
                HeapPeakM = 1.5 * HalfSpanM * Math.Tan(angleOfReposeDeg * Math.PI / 180);
                break;
        }

        WallHeightM = g.WallHeightM;
        WallThicknessM = g.WallThicknessM;
        YoungsModulusKPa = g.WallYoungsModulusGPa * 1e6;
        PoissonRatio = g.WallPoissonRatio;
        HopperShape = g.Hopper.Shape;
        if (HopperShape != HopperShape.Flat)
        {
            var tanBeta = Math.Tan(g.Hopper.HalfAngleDeg * Math.PI / 180);
            HopperTanBeta = tanBeta;
            HopperApexToTransitionM = HalfSpanM / tanBeta;
            HopperApexToOutletM = g.Hopper.OutletM / 2 / tanBeta;
            HopperHeightM = HopperApexToTransitionM - HopperApexToOutletM;
            HopperVolumeM3 = HopperVolumeBelow(HopperApexToTransitionM);
        }
    }

    public SectionShape Section { get; }

    public double AreaM2 { get; }

    public double PerimeterM { get; }

    /// <summary>Radius (circle) or half side (square, short side of a rectangle), m.</summary>
    public double HalfSpanM { get; }

    /// <summary>Height of a full heap at the angle of repose above the highest wall contact, m.</summary>
    public double HeapPeakM { get; }

    public double WallHeightM { get; }

    public double WallThicknessM { get; }

    public double YoungsModulusKPa { get; }

    public double PoissonRatio { get; }

    public HopperShape HopperShape { get; }

    public double HopperTanBeta { get; }

    public double HopperApexToTransitionM { get; }

    public double HopperApexToOutletM { get; }

    public double HopperHeightM { get; }

    public double HopperVolumeM3 { get; }

    /// <summary>A/U [D].</summary>
    public double HydraulicRadiusM => AreaM2 / PerimeterM;

    /// <summary>Total volume with the contact at the eaves and a full heap, m³.</summary>
    public double CapacityM3 => HopperVolumeM3 + (AreaM2 * Math.Max(0, WallHeightM - HeapPeakM)) + (AreaM2 * Math.Min(HeapPeakM, WallHeightM) / 3);

    /// <summary>Section area inside the hopper at height x above the apex, m².</summary>
    public double HopperArea(double xM)
    {
        var half = xM * HopperTanBeta;
        return HopperShape switch
        {
            HopperShape.Conical => Math.PI * half * half,
            HopperShape.Pyramidal => 4 * half * half * (AreaM2 / (4 * HalfSpanM * HalfSpanM)),
            HopperShape.Wedge => 2 * half * (AreaM2 / (2 * HalfSpanM)),
            _ => AreaM2,
        };
    }

    /// <summary>Wall contact perimeter inside the hopper at height x above the apex, m.</summary>
    public double HopperPerimeter(double xM)
    {
        var half = xM * HopperTanBeta;
        return HopperShape switch
        {
            HopperShape.Conical => 2 * Math.PI * half,
            HopperShape.Pyramidal => PerimeterM * half / HalfSpanM,
            // A wedge's two sloping walls along the long side; the end walls are neglected.
            HopperShape.Wedge => 2 * (AreaM2 / (2 * HalfSpanM)),
            _ => PerimeterM,
        };
    }

    /// <summary>Volume of the hopper between the outlet and height x above the apex (similar sections), m³.</summary>
    public double HopperVolumeBelow(double xM)
    {
        if (HopperShape == HopperShape.Flat || xM <= HopperApexToOutletM)
        {
            return 0;
        }

        var x = Math.Min(xM, HopperApexToTransitionM);
        var x0 = HopperApexToOutletM;
        // A(x) ∝ x² (cone, pyramid) or ∝ x (wedge): integrate the power exactly.
        return HopperShape == HopperShape.Wedge
            ? HopperArea(x) / x * ((x * x) - (x0 * x0)) / 2
            : HopperArea(x) / (x * x) * ((x * x * x) - (x0 * x0 * x0)) / 3;
    }

    /// <summary>
    /// Where the contents' surface is for a given volume: the contact height on the wall above the
    /// transition, the heap height above it, or (below the transition) the flat surface in the hopper.
    /// </summary>
    public FillSurface SurfaceFor(double volumeM3)
    {
        volumeM3 = Math.Max(0, volumeM3);
        if (volumeM3 <= HopperVolumeM3 && HopperShape != HopperShape.Flat)
        {
            // Bisection on the hopper volume: monotonic, a few dozen steps are plenty.
            double lo = HopperApexToOutletM, hi = HopperApexToTransitionM;
            for (var i = 0; i < 60; i++)
            {
                var mid = (lo + hi) / 2;
                if (HopperVolumeBelow(mid) < volumeM3)
                {
                    lo = mid;
                }
                else
                {
                    hi = mid;
                }
            }

            var x = (lo + hi) / 2;
            return new FillSurface(ContactHeightM: x - HopperApexToTransitionM, HeapHeightM: 0, InHopper: true);
        }

        var above = volumeM3 - HopperVolumeM3;
        // The heap grows first (a cone on the transition), then the contact line rises.
        var heap = Math.Min(HeapPeakM, 3 * above / AreaM2);
        var contact = (above - (AreaM2 * heap / 3)) / AreaM2;
        return new FillSurface(contact, heap, InHopper: false);
    }
}

/// <summary>
/// The contents' surface: contact height on the wall above the transition (negative: the flat
/// surface inside the hopper, below the transition), and the height of the heap above the contact.
/// </summary>
public readonly record struct FillSurface(double ContactHeightM, double HeapHeightM, bool InHopper)
{
    /// <summary>Height of the equivalent flat surface above the transition: contact + heap/3 [D].</summary>
    public double EquivalentLevelM => ContactHeightM + (HeapHeightM / 3);
}
