using SiloWatch.Plant;
using SiloWatch.Simulator.Materials;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class MaterialReaderTests
{
    [Fact]
    public void TheLibraryWithCommentsIsReadAndWheatHasThePublishedValues()
    {
        var wheat = TestPlant.Materials["wheat"];
        // [V] EN 1991-4:2006 Annex E Table E.1, wheat row as reproduced in a published paper (DOMAIN.md §2).
        Assert.Equal(7.5, wheat.UnitWeightLowerKnM3);
        Assert.Equal(9.0, wheat.UnitWeightUpperKnM3);
        Assert.Equal(0.54, wheat.KMean);
        Assert.Equal(1.11, wheat.KFactor);
        Assert.Equal(0.57, wheat.WallFriction(WallCategory.D3));
        Assert.Equal(1.16, wheat.WallFrictionFactor);
    }

    [Fact]
    public void EveryMaterialOfTheDemoPlantIsInTheLibrary()
    {
        var materials = TestPlant.Materials;
        foreach (var silo in TestPlant.Plant.Sites.SelectMany(s => s.Silos))
        {
            Assert.True(materials.ContainsKey(silo.Material), silo.Material);
        }
    }

    [Fact]
    public void AMaterialWithoutANumberIsRejectedWithItsName()
    {
        const string json = """
            // a comment
            { "Materials": [ { "Name": "grit", "UnitWeightLowerKnM3": 10 } ] }
            """;
        using var stream = new MemoryStream(System.Text.Encoding.UTF8.GetBytes(json));
        var ex = Assert.Throws<InvalidDataException>(() => MaterialReader.Parse(stream, "test.json"));
        Assert.Contains("grit", ex.Message, StringComparison.Ordinal);
    }
}
