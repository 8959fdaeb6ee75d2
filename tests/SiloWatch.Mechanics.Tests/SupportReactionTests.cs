using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class SupportReactionTests
{
    // Rigid base, n supports evenly on a circle of radius R, contents' centre of gravity at e, θ_e:
    // R_i = W/n·[1 + 2(e/R)·cos(θ_i − θ_e)] [D, DOMAIN.md §3].
    private static SiloModel Model(int supports, WeighingArrangement arrangement, params int[] weighed) =>
        SiloModel.Create(TestSilos.WithLoadCells(TestSilos.Circular(6, 18), arrangement, supports, 3.0, weighed), TestSilos.Wheat());

    [Theory]
    [InlineData(3)]
    [InlineData(4)]
    [InlineData(6)]
    [InlineData(8)]
    public void LegReactionsSumToTheWeightAndBalanceItsMoment(int n)
    {
        var model = Model(n, WeighingArrangement.AllSupports, [.. Enumerable.Range(1, n)]);
        var state = model.StateAtLevel(12, FlowMode.Filling, eccentricityM: 0.7, eccentricityAzimuthDeg: 37);
        var reactions = new double[n];
        model.SupportReactionsKn(state, reactions);
        var weight = model.Expect(state).ContentsWeightKn;
        Assert.Equal(weight, reactions.Sum(), 1e-9 * weight);
        // Moment about the axis: Σ R_i·R·(cos θ_i, sin θ_i) = W·e·(cos θ_e, sin θ_e) (statics).
        var mx = 0.0;
        var my = 0.0;
        for (var i = 0; i < n; i++)
        {
            var a = 2 * Math.PI * i / n;
            mx += reactions[i] * 3.0 * Math.Cos(a);
            my += reactions[i] * 3.0 * Math.Sin(a);
        }

        Assert.Equal(weight * 0.7 * Math.Cos(37 * Math.PI / 180), mx, 1e-9 * weight);
        Assert.Equal(weight * 0.7 * Math.Sin(37 * Math.PI / 180), my, 1e-9 * weight);
    }

    [Fact]
    public void ACentredLoadGivesEqualReactions()
    {
        var model = Model(4, WeighingArrangement.AllSupports, 1, 2, 3, 4);
        var state = model.StateAtLevel(10);
        var reactions = new double[4];
        model.SupportReactionsKn(state, reactions);
        Assert.All(reactions, r => Assert.Equal(model.Expect(state).ContentsWeightKn / 4, r, 9));
    }

    [Theory]
    [InlineData(0.0)]
    [InlineData(45.0)]
    [InlineData(123.0)]
    public void TwoDiagonalLegsOfFourCancelTheEccentricityToFirstOrder(double azimuthDeg)
    {
        // 2 diagonal of 4 weighed cancel to first order [D, DOMAIN.md §3]: the scaled sum n/weighed·ΣR is W.
        var model = Model(4, WeighingArrangement.SomeSupports, 1, 3);
        var state = model.StateAtLevel(12, FlowMode.Filling, 0.9, azimuthDeg);
        var loads = model.Expect(state);
        var structure = Units.MassKgToWeightKn(10_000);
        Assert.Equal(loads.ContentsWeightKn, 2 * (loads.WeighedLoadKn - structure), 1e-9 * loads.ContentsWeightKn);
    }

    [Fact]
    public void OneLegOfThreeErrsByTwiceEOverRAndTwoAdjacentOfFourByRootTwo()
    {
        // 1 of 3 errs up to 2e/R; 2 adjacent of 4 up to √2·e/R [D, DOMAIN.md §3].
        var structure = Units.MassKgToWeightKn(10_000);
        var one = Model(3, WeighingArrangement.SomeSupports, 1);
        var s1 = one.StateAtLevel(12, FlowMode.Filling, 0.3, 0);
        var l1 = one.Expect(s1);
        Assert.Equal(2 * 0.3 / 3.0, (3 * (l1.WeighedLoadKn - structure) / l1.ContentsWeightKn) - 1, 9);

        var two = Model(4, WeighingArrangement.SomeSupports, 1, 2);
        var s2 = two.StateAtLevel(12, FlowMode.Filling, 0.3, 45);
        var l2 = two.Expect(s2);
        Assert.Equal(Math.Sqrt(2) * 0.3 / 3.0, (2 * (l2.WeighedLoadKn - structure) / l2.ContentsWeightKn) - 1, 9);
    }

    [Fact]
    public void TheWeighedLoadFollowsTheArrangement()
    {
        var structure = Units.MassKgToWeightKn(10_000);
        var all = Model(4, WeighingArrangement.AllSupports, 1, 2, 3, 4);
        var state = all.StateAtLevel(15);
        var loads = all.Expect(state);
        Assert.Equal(loads.ContentsWeightKn + structure, loads.WeighedLoadKn, 9);

        var floorOnly = Model(3, WeighingArrangement.FloorOnly, 1, 2, 3);
        var f = floorOnly.Expect(floorOnly.StateAtLevel(15));
        Assert.Equal(f.FloorLoadKn + structure, f.WeighedLoadKn, 9);
        Assert.True(f.FloorLoadKn < 0.5 * f.ContentsWeightKn); // a slender silo's floor carries well under half
        var cells = new double[3];
        floorOnly.SupportReactionsKn(floorOnly.StateAtLevel(15), cells);
        Assert.All(cells, c => Assert.Equal(f.FloorLoadKn / 3, c, 9));

        var hopperSilo = TestSilos.WithLoadCells(TestSilos.Circular(8, 24, HopperShape.Conical, 30, 0.6), WeighingArrangement.FloorOnly, 3, 2.0, 1, 2, 3);
        var hopper = SiloModel.Create(hopperSilo, TestSilos.Library().Get("cement"));
        var full = hopper.StateAtLevel(hopper.Geometry.MaxLevelM);
        var h = hopper.Expect(full);
        // Floor-only on a hopper: A·p_v at the transition plus the hopper's contents.
        var pvt = hopper.WallAt(full, 0).VerticalKPa;
        Assert.Equal((hopper.AreaM2 * pvt) + (hopper.Expected.UnitWeightKnM3 * hopper.Geometry.HopperVolumeM3), h.FloorLoadKn, 9);
    }

    [Fact]
    public void FewerThanThreeSupportsAreRefusedByName()
    {
        var model = Model(2, WeighingArrangement.AllSupports, 1, 2);
        var ex = Assert.Throws<NotSupportedException>(() => model.SupportReactionsKn(model.StateAtLevel(5), new double[2]));
        Assert.Contains("at least 3 supports", ex.Message, StringComparison.Ordinal);
    }
}
