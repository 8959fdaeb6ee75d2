using System.Text.Json;
using System.Text.Json.Serialization;
using Microsoft.Extensions.Configuration;
using SiloWatch.Plant.Tests.Support;

namespace SiloWatch.Plant.Tests;

/// <summary>
/// A plant of hundreds of silos loads through the indexed JSON provider: the same model and the same findings as
/// the stock JSON provider gives (speed is measured by the plant-load benchmark, not here).
/// </summary>
public sealed class LargePlantTests
{
    private static readonly JsonSerializerOptions ModelJson = new() { Converters = { new JsonStringEnumConverter() } };

    [Fact]
    public void FourHundredSilosGiveEveryPlantedFindingWithSiteSiloSensorKeyAndValue()
    {
        using var file = LargePlantFile.Write(400);

        var (plant, findings) = PlantLoader.LoadFile(file.Path, LargePlantFile.DemoMaterials);

        Assert.Equal(8, plant.Sites.Count);
        Assert.Equal(400, plant.Sites.Sum(s => s.Silos.Count));
        Assert.Equal(334, file.Faults.Count);
        Assert.Equal(file.Faults, findings.Select(f => new PlantedFault(f.Site, f.Silo, f.Sensor, f.Key, f.Value)));
        Assert.All(findings, f => Assert.False(string.IsNullOrEmpty(f.Problem)));
    }

    [Fact]
    public void TheIndexedProviderBindsTheSameModelAndFindingsAsTheStockJsonProvider()
    {
        // Few enough silos for the stock provider to bind in a moment; the planted faults cover every silo template.
        using var file = LargePlantFile.Write(30);

        var (indexed, indexedFindings) = PlantLoader.LoadFile(file.Path, LargePlantFile.DemoMaterials);
        var stock = new ConfigurationBuilder().AddJsonFile(file.Path, optional: false, reloadOnChange: false).Build();
        var (bound, bindFindings) = PlantLoader.Bind(stock);
        Assert.Empty(bindFindings);
        var stockFindings = PlantValidator.Validate(bound, LargePlantFile.DemoMaterials);

        Assert.Equal(JsonSerializer.Serialize(bound, ModelJson), JsonSerializer.Serialize(indexed, ModelJson));
        Assert.Equal(stockFindings, indexedFindings);
        Assert.Equal(25, indexedFindings.Count);
    }

    [Fact]
    public void TheIndexedProviderListsTheSameChildKeysAsTheStockProviderAtEveryLevel()
    {
        using var file = LargePlantFile.Write(8);
        var indexed = new ConfigurationBuilder().Add(PlantLoader.JsonFile(file.Path)).Build();
        var stock = new ConfigurationBuilder().AddJsonFile(file.Path, optional: false, reloadOnChange: false).Build();

        // Walk both trees side by side: the same children, in the same order, with the same values.
        var pending = new Stack<(IConfiguration Indexed, IConfiguration Stock)>([(indexed, stock)]);
        var sections = 0;
        while (pending.TryPop(out var pair))
        {
            var a = pair.Indexed.GetChildren().ToList();
            var b = pair.Stock.GetChildren().ToList();
            Assert.Equal(b.Select(c => (c.Path, c.Value)), a.Select(c => (c.Path, c.Value)));
            for (var i = 0; i < a.Count; i++)
            {
                pending.Push((a[i], b[i]));
            }

            sections += a.Count;
        }

        Assert.True(sections > 1000, $"only {sections} sections walked");
        Assert.Empty(indexed.GetSection("Plant:Sites:0:Silos:0:Nothing").GetChildren());
        Assert.Equal("gen-00", indexed.GetSection("plant:sites:0:id").Value);
    }

    [Fact]
    public void AnUnknownKeyInTheLastOfFourHundredSilosIsAFinding()
    {
        using var file = LargePlantFile.Write(400, extraSiloKey: "Diameter");

        var (_, findings) = PlantLoader.LoadFile(file.Path, LargePlantFile.DemoMaterials);

        var f = Assert.Single(findings);
        Assert.Contains("Diameter", f.Problem, StringComparison.Ordinal);
    }

    [Fact]
    public void AValueSetAfterLoadingIsSeenByTheChildLookup()
    {
        using var file = LargePlantFile.Write(4);
        var configuration = new ConfigurationBuilder().Add(PlantLoader.JsonFile(file.Path)).Build();
        var site = configuration.GetSection("Plant:Sites:0");
        Assert.DoesNotContain(site.GetChildren(), c => c.Key == "Note");

        configuration["Plant:Sites:0:Note:Text"] = "added";

        Assert.Contains(site.GetChildren(), c => c.Key == "Note");
        Assert.Equal("Text", Assert.Single(site.GetSection("Note").GetChildren()).Key);
    }
}
