using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests.Support;

/// <summary>Builders of silo definitions and materials for tests (invented geometry, no real plant).</summary>
internal static class TestSilos
{
    public static string ConfigPath(string file) => Path.Combine(AppContext.BaseDirectory, "config", file);

    public static MaterialLibrary Library() => MaterialLibrary.Load(ConfigPath("materials.json"));

    public static Material Wheat() => Library().Get("wheat");

    public static SiloOptions Circular(double diameterM, double wallHeightM, HopperShape hopper = HopperShape.Flat, double halfAngleDeg = 30, double outletM = 0.5)
        => Silo(new GeometryOptions
        {
            Section = SectionShape.Circular,
            DiameterM = diameterM,
            WallHeightM = wallHeightM,
            WallThicknessM = 0.008,
            WallCategory = WallCategory.D2,
            Hopper = new HopperOptions { Shape = hopper, HalfAngleDeg = halfAngleDeg, OutletM = outletM },
        });

    public static SiloOptions Square(double sideM, double wallHeightM, HopperShape hopper = HopperShape.Flat, double halfAngleDeg = 30, double outletM = 0.4)
        => Silo(new GeometryOptions
        {
            Section = SectionShape.Square,
            WidthM = sideM,
            WallHeightM = wallHeightM,
            WallThicknessM = 0.008,
            WallCategory = WallCategory.D2,
            Hopper = new HopperOptions { Shape = hopper, HalfAngleDeg = halfAngleDeg, OutletM = outletM },
        });

    public static SiloOptions Rectangular(double widthM, double lengthM, double wallHeightM, HopperShape hopper = HopperShape.Flat, double halfAngleDeg = 30, double outletM = 0.4)
        => Silo(new GeometryOptions
        {
            Section = SectionShape.Rectangular,
            WidthM = widthM,
            LengthM = lengthM,
            WallHeightM = wallHeightM,
            WallThicknessM = 0.008,
            WallCategory = WallCategory.D2,
            Hopper = new HopperOptions { Shape = hopper, HalfAngleDeg = halfAngleDeg, OutletM = outletM },
        });

    public static SiloOptions Silo(GeometryOptions geometry) => new()
    {
        Id = "T1",
        Material = "wheat",
        Geometry = geometry,
        Weighing = new WeighingOptions { Arrangement = WeighingArrangement.AllSupports, SupportCount = 4, SupportRadiusM = 3, FirstSupportAngleDeg = 45 },
    };

    /// <summary>Every section/hopper combination the geometry supports.</summary>
    public static IEnumerable<(string Name, SiloOptions Silo)> AllShapes()
    {
        yield return ("circular flat", Circular(6, 18));
        yield return ("circular conical", Circular(6, 18, HopperShape.Conical, 30, 0.5));
        yield return ("circular conical, point outlet", Circular(4, 10, HopperShape.Conical, 40, 0));
        yield return ("square flat", Square(4, 10));
        yield return ("square pyramidal", Square(4, 10, HopperShape.Pyramidal, 30, 0.4));
        yield return ("square wedge", Square(4, 10, HopperShape.Wedge, 25, 0.3));
        yield return ("rectangular flat", Rectangular(3, 7, 12));
        yield return ("rectangular pyramidal", Rectangular(3, 7, 12, HopperShape.Pyramidal, 35, 0.4));
        yield return ("rectangular wedge", Rectangular(3, 7, 12, HopperShape.Wedge, 20, 0.3));
    }

    /// <summary>A silo with a ring of gauges at a height, n gauges evenly spaced.</summary>
    public static SiloOptions WithGaugeRing(SiloOptions silo, string ring, SensorKind kind, double heightM, int count)
    {
        for (var i = 0; i < count; i++)
        {
            silo.Sensors.Add(new SensorOptions
            {
                Id = $"SG-{ring}-{i}",
                Kind = kind,
                Unit = "mV/V",
                Ring = ring,
                HeightM = heightM,
                AngleDeg = 360.0 * i / count,
                GaugeFactor = 2.0,
            });
        }

        return silo;
    }

    public static SiloOptions WithLoadCells(SiloOptions silo, WeighingArrangement arrangement, int supports, double radiusM, params int[] weighedSupports)
    {
        silo.Weighing = new WeighingOptions
        {
            Arrangement = arrangement,
            SupportCount = supports,
            SupportRadiusM = radiusM,
            FirstSupportAngleDeg = 0,
            StructureMassKg = 10_000,
        };
        foreach (var s in weighedSupports)
        {
            silo.Sensors.Add(new SensorOptions { Id = $"LC{s}", Kind = SensorKind.LoadCell, Unit = "mV/V", Support = s, CapacityKn = 1000, RatedOutputMvPerV = 2 });
        }

        return silo;
    }
}
