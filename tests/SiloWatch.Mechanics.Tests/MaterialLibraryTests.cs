using SiloWatch.Mechanics.Tests.Support;
using SiloWatch.Plant;

namespace SiloWatch.Mechanics.Tests;

public sealed class MaterialLibraryTests : IDisposable
{
    private readonly string _dir = Directory.CreateTempSubdirectory("silowatch-mat-").FullName;

    public void Dispose() => Directory.Delete(_dir, recursive: true);

    private string Write(string json)
    {
        var path = Path.Combine(_dir, $"m{Guid.NewGuid():N}.json");
        File.WriteAllText(path, json);
        return path;
    }

    private const string Row = """
        {
          "Name": "lab-barley",
          "UnitWeightLowerKnM3": 6.8, "UnitWeightUpperKnM3": 7.4,
          "AngleOfReposeDeg": 31, "KMean": 0.55, "KFactor": 1.1,
          "WallFrictionMean": { "D1": 0.25, "D2": 0.35, "D3": 0.5 },
          "WallFrictionFactor": 1.15, "PatchFactorCop": 0.5,
          "Source": "Lab report 2026-11 (invented for the test)", "Confidence": "measured",
        }
        """;

    [Fact]
    public void TheShippedLibraryLoadsWithItsCommentsAndAnnexEValues()
    {
        var library = TestSilos.Library();
        Assert.Equal(["cement", "default", "fly-ash", "maize", "sand", "wheat"], library.Names.Order(StringComparer.Ordinal));
        var wheat = library.Get("wheat");
        // EN 1991-4 Annex E Table E.1 wheat [V]: γ 7.5/9.0, K_m 0.54, a_K 1.11, μ_m(D3) 0.57, a_μ 1.16.
        Assert.Equal(9.0, wheat.UnitWeightUpperKnM3);
        Assert.Equal(1.11 * 0.54, wheat.KUpper, 12);   // X_u = a_X·X_m (§4.2.3 [V])
        Assert.Equal(0.54 / 1.11, wheat.KLower, 12);   // X_l = X_m/a_X
        Assert.Equal(0.57 * 1.16, wheat.MuUpper(WallCategory.D3), 12);
        Assert.Equal(0.57 / 1.16, wheat.MuLower(WallCategory.D3), 12);
        var floor = wheat.Properties(PropertyCase.MaxFloorLoad, WallCategory.D3);
        Assert.Equal((9.0, wheat.KLower, wheat.MuLower(WallCategory.D3)), (floor.UnitWeightKnM3, floor.K, floor.Mu));
    }

    [Fact]
    public void UsersAddLabMaterialsInASecondFileThatCanReplaceAStandardRow()
    {
        var extra = Write($$"""
            // lab values
            { "Materials": [ {{Row}}, {{Row.Replace("lab-barley", "wheat", StringComparison.Ordinal)}} ] }
            """);
        var library = MaterialLibrary.Load(TestSilos.ConfigPath("materials.json"), extra);
        Assert.True(library.TryGet("lab-barley", out var barley));
        Assert.Equal(0.55, barley.KMean);
        Assert.Equal(["wheat"], library.Replaced);
        Assert.Equal(0.55, library.Get("wheat").KMean);
    }

    [Theory]
    [InlineData("\"KMean\": 0.55", "\"KMean\": -0.2", "KMean")]
    [InlineData("\"UnitWeightUpperKnM3\": 7.4", "\"UnitWeightUpperKnM3\": 6.0", "UnitWeightUpperKnM3")]
    [InlineData("\"D2\": 0.35, ", "", "WallFrictionMean.D2")]
    [InlineData("\"KFactor\": 1.1", "\"KFactr\": 1.1", "KFactr")]
    [InlineData("\"KMean\": 0.55", "\"KMean\": \"high\"", "KMean")]
    public void ABadRowIsReportedWithFileMaterialAndKey(string from, string to, string key)
    {
        var path = Write($$"""{ "Materials": [ {{Row.Replace(from, to, StringComparison.Ordinal)}} ] }""");
        var ex = Assert.Throws<MaterialLibraryException>(() => MaterialLibrary.Load(path));
        Assert.Equal(path, ex.File);
        Assert.Equal("lab-barley", ex.Material);
        Assert.Equal(key, ex.Key);
        Assert.Contains(path, ex.Message, StringComparison.Ordinal);
        Assert.Contains("lab-barley", ex.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void AMissingFileOrArrayIsReportedByName()
    {
        var missing = Path.Combine(_dir, "nope.json");
        Assert.Contains("file not found", Assert.Throws<MaterialLibraryException>(() => MaterialLibrary.Load(missing)).Message, StringComparison.Ordinal);
        var empty = Write("{ }");
        Assert.Equal("Materials", Assert.Throws<MaterialLibraryException>(() => MaterialLibrary.Load(empty)).Key);
        var twice = Write($$"""{ "Materials": [ {{Row}}, {{Row}} ] }""");
        Assert.Contains("used twice", Assert.Throws<MaterialLibraryException>(() => MaterialLibrary.Load(twice)).Message, StringComparison.Ordinal);
    }

    [Fact]
    public void AMaterialAddedInCodeIsValidatedLikeARowOfTheFile()
    {
        var library = TestSilos.Library();
        var lab = library.Get("wheat") with { Name = "wheat-lab", KMean = 0.5, Source = "lab" };
        Assert.True(library.With(lab).TryGet("wheat-lab", out _));
        Assert.Throws<MaterialLibraryException>(() => library.With(lab with { WallFrictionFactor = 0.5 }));
    }
}
