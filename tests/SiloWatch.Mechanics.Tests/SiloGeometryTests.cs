using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class SiloGeometryTests
{
    [Fact]
    public void HydraulicRadiiAreDOver4AOver4AndAbOver2APlusB()
    {
        // A/U: circle D/4, square a/4, rectangle ab/(2(a+b)) [D, DOMAIN.md §1].
        Assert.Equal(6.0 / 4, new SiloGeometry(TestSilos.Circular(6, 18).Geometry, 30).HydraulicRadiusM, 12);
        Assert.Equal(4.0 / 4, new SiloGeometry(TestSilos.Square(4, 10).Geometry, 30).HydraulicRadiusM, 12);
        Assert.Equal(3.0 * 7 / (2 * (3 + 7)), new SiloGeometry(TestSilos.Rectangular(3, 7, 12).Geometry, 30).HydraulicRadiusM, 12);
    }

    [Theory]
    [InlineData(1.0)]
    [InlineData(1.5)]
    [InlineData(3.0)]
    [InlineData(10.0)]
    public void ARectangleHasASmallerHydraulicRadiusThanACircleOfTheSameArea(double aspect)
    {
        // For a given area the circle has the least perimeter (isoperimetric inequality), so the largest A/U [D].
        const double area = 25.0;
        var width = Math.Sqrt(area / aspect);
        var rect = aspect == 1.0
            ? new SiloGeometry(TestSilos.Square(width, 10).Geometry, 30)
            : new SiloGeometry(TestSilos.Rectangular(width, width * aspect, 10).Geometry, 30);
        var circle = new SiloGeometry(TestSilos.Circular(Math.Sqrt(4 * area / Math.PI), 10).Geometry, 30);
        Assert.Equal(area, rect.AreaM2, 9);
        Assert.Equal(area, circle.AreaM2, 9);
        Assert.True(rect.HydraulicRadiusM < circle.HydraulicRadiusM);
        if (aspect == 1.0)
        {
            // Square a/4 = √A/4 = 1.25 m against circle D/4 = √(A/π)/2 = 1.4105 m.
            Assert.Equal(1.25, rect.HydraulicRadiusM, 12);
            Assert.Equal(1.41047, circle.HydraulicRadiusM, 5);
        }
    }

    [Fact]
    public void VolumeAndLevelRoundTripForEverySectionAndHopper()
    {
        foreach (var (name, silo) in TestSilos.AllShapes())
        {
            var g = new SiloGeometry(silo.Geometry, 34);
            var previous = -1.0;
            for (var i = 0; i <= 200; i++)
            {
                var level = g.MaxLevelM * i / 200;
                var volume = g.VolumeAtLevel(level);
                Assert.True(volume > previous, $"{name}: volume must grow with level ({level} m)");
                previous = volume;
                if (level > 0 || g.HopperShape != HopperShape.Flat)
                {
                    Assert.True(Math.Abs(g.LevelAtVolume(volume) - level) < 1e-7, $"{name}: round trip at {level} m gave {g.LevelAtVolume(volume)}");
                }
            }
        }
    }

    [Fact]
    public void TheCircularSiloVolumeIsCylinderPlusConeFrustumPlusHeapCone()
    {
        // Hand computation: D = 6 m, conical hopper β = 30°, outlet 0.5 m, φ_r = 34°, wall contact 10 m above the transition.
        var g = new SiloGeometry(TestSilos.Circular(6, 18, HopperShape.Conical, 30, 0.5).Geometry, 34);
        const double r = 3.0, ro = 0.25;
        var hh = (r - ro) / Math.Tan(Math.PI / 6);                         // 4.7631 m
        var frustum = Math.PI * hh / 3 * ((r * r) + (r * ro) + (ro * ro));   // πh/3·(R² + Rr + r²)
        var cylinder = Math.PI * r * r * 10;
        var heap = Math.PI * r * r * (r * Math.Tan(34 * Math.PI / 180)) / 3; // cone of height r·tanφ_r
        Assert.Equal(hh, g.HopperHeightM, 12);
        Assert.Equal(frustum + cylinder + heap, g.VolumeAtLevel(hh + 10), 9);
        Assert.Equal(frustum + (Math.PI * r * r * 18), g.CapacityM3, 9);
        // h_o = r·tanφ_r/3 (EN 1991-4 eq. 5.78 [V via secondary sources]).
        Assert.Equal(r * Math.Tan(34 * Math.PI / 180) / 3, g.HeapEquivalentHeightM, 12);
    }

    [Fact]
    public void PyramidalAndWedgeHoppersHoldThePrismatoidVolume()
    {
        // Prismatoid rule V = h/6·(A_bottom + 4·A_mid + A_top), exact when the section is quadratic in height [V, Simpson/prismatoid formula].
        foreach (var shape in new[] { HopperShape.Pyramidal, HopperShape.Wedge })
        {
            var g = new SiloGeometry(TestSilos.Rectangular(3, 7, 12, shape, 30, 0.4).Geometry, 0);
            var t = Math.Tan(Math.PI / 6);
            var h = (3 - 0.4) / (2 * t);
            double Area(double y) => shape == HopperShape.Pyramidal
                ? (0.4 + (2 * t * y)) * (7 - 3 + 0.4 + (2 * t * y))
                : (0.4 + (2 * t * y)) * 7;
            var prismatoid = h / 6 * (Area(0) + (4 * Area(h / 2)) + Area(h));
            Assert.Equal(prismatoid, g.HopperVolumeM3, 9);
            // φ_r = 0: no heap, so the level-top volume at the transition is the hopper.
            Assert.Equal(prismatoid, g.VolumeAtLevel(h), 9);
        }
    }

    [Fact]
    public void TheHeapOfARectangleIsAHippedRidgeAndOfASquareAPyramid()
    {
        // Hipped ridge with slope φ_r to every wall [D]: ridge height H = b·tanφ/2; volume = prism over the
        // ridge (L − b)·b·H/2 plus the two end half-pyramids b²·H/3 (together b²(3L − b)·tanφ/12).
        var tan = Math.Tan(36 * Math.PI / 180);
        var rect = new SiloGeometry(TestSilos.Rectangular(4, 10, 12).Geometry, 36);
        var ridge = 4 * tan / 2;
        var heapVolume = ((10 - 4) * 4 * ridge / 2) + (4 * 4 * ridge / 3);
        Assert.Equal(heapVolume, rect.HeapEquivalentHeightM * rect.AreaM2, 9);
        // Square pyramid: h_o = a·tanφ_r/6 [D, DOMAIN.md §1].
        var square = new SiloGeometry(TestSilos.Square(4, 10).Geometry, 36);
        Assert.Equal(4 * tan / 6, square.HeapEquivalentHeightM, 12);
        Assert.Equal(4 * 4 * (2 * tan) / 3, square.HeapEquivalentHeightM * square.AreaM2, 9);
    }

    [Fact]
    public void VolumesBeyondTheDatumAreClampedAndSaidSo()
    {
        var g = new SiloGeometry(TestSilos.Circular(6, 18).Geometry, 34);
        Assert.False(g.TryLevelAtVolume(g.VolumeAtLevel(g.MaxLevelM) * 1.1, out var high));
        Assert.Equal(g.MaxLevelM, high);
        Assert.False(g.TryLevelAtVolume(-1, out var low));
        Assert.Equal(0, low);
        // A heap on a flat floor that does not reach the wall reads level 0 and is a valid volume.
        Assert.True(g.TryLevelAtVolume(g.VolumeAtLevel(0) / 2, out var heapOnly));
        Assert.Equal(0, heapOnly);
        Assert.Throws<ArgumentOutOfRangeException>(() => g.VolumeAtLevel(g.MaxLevelM + 1));
    }

    [Fact]
    public void AHopperThatDoesNotFitTheSectionIsRefusedByName()
    {
        var silo = TestSilos.Circular(6, 18, HopperShape.Pyramidal, 30, 0.5);
        var ex = Assert.Throws<NotSupportedException>(() => new SiloGeometry(silo.Geometry, 30));
        Assert.Contains("Pyramidal", ex.Message, StringComparison.Ordinal);
        Assert.Contains("Circular", ex.Message, StringComparison.Ordinal);
    }
}
