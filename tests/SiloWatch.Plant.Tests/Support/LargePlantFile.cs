using System.Text.Json;
using System.Text.Json.Nodes;

namespace SiloWatch.Plant.Tests.Support;

/// <summary>One fault planted in a generated silo, and the finding it must give.</summary>
public sealed record PlantedFault(string Site, string Silo, string Sensor, string Key, string Value);

/// <summary>
/// A plant file of many silos made from the demo plant's four silos (invented ids, 50 silos a site), with a
/// fault planted in most silos so that the findings of the whole file are known in advance.
/// </summary>
public sealed class LargePlantFile : IDisposable
{
    private LargePlantFile(string path, IReadOnlyList<PlantedFault> faults)
    {
        Path = path;
        Faults = faults;
    }

    public string Path { get; }

    /// <summary>The planted faults in file order (site, silo, then key), one finding each.</summary>
    public IReadOnlyList<PlantedFault> Faults { get; }

    /// <summary>Materials of the demo plant; a planted "chalk" is not among them.</summary>
    public static IReadOnlySet<string> DemoMaterials { get; } = new HashSet<string>(StringComparer.Ordinal) { "wheat", "maize", "cement", "fly-ash" };

    public static LargePlantFile Write(int silos, string? extraSiloKey = null)
    {
        var demoPath = System.IO.Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json");
        var demo = JsonNode.Parse(File.ReadAllText(demoPath), documentOptions: new JsonDocumentOptions { CommentHandling = JsonCommentHandling.Skip })!;
        var templates = demo["Plant"]!["Sites"]![0]!["Silos"]!.AsArray();
        var sites = new JsonArray();
        var faults = new List<PlantedFault>();
        for (var n = 0; n < silos; n++)
        {
            var (s, j) = (n / 50, n % 50);
            if (j == 0)
            {
                sites.Add(new JsonObject { ["Id"] = $"gen-{s:D2}", ["Name"] = "generated test site", ["Silos"] = new JsonArray() });
            }

            var siteId = $"gen-{s:D2}";
            var silo = templates[n % templates.Count]!.DeepClone();
            var siloId = $"{(string)silo["Id"]!}-{n:D4}";
            silo["Id"] = siloId;
            var key = $"Plant:Sites:{s}:Silos:{j}";
            switch (n % 6)
            {
                case 0:
                    silo["Geometry"]!["WallThicknessM"] = 0.8;
                    faults.Add(new(siteId, siloId, "", key + ":Geometry:WallThicknessM", "0.8"));
                    break;
                case 1:
                    var first = silo["Sensors"]![0]!;
                    first["Unit"] = "kN";
                    faults.Add(new(siteId, siloId, (string)first["Id"]!, key + ":Sensors:0:Unit", "kN"));
                    break;
                case 2:
                    silo["AlarmLimits"]!["OverfillPercent"] = 120;
                    faults.Add(new(siteId, siloId, "", key + ":AlarmLimits:OverfillPercent", "120"));
                    break;
                case 3:
                    var last = silo["Sensors"]!.AsArray().Count - 1;
                    var sensor = silo["Sensors"]![last]!;
                    sensor["ExpectedPeriod"] = "02:00:00";
                    faults.Add(new(siteId, siloId, (string)sensor["Id"]!, $"{key}:Sensors:{last}:ExpectedPeriod", "02:00:00"));
                    break;
                case 4:
                    silo["Material"] = "chalk";
                    faults.Add(new(siteId, siloId, "", key + ":Material", "chalk"));
                    break;
                default:
                    break; // a silo with no fault
            }

            if (n == silos - 1 && extraSiloKey is not null)
            {
                silo[extraSiloKey] = 1;
            }

            sites[^1]!["Silos"]!.AsArray().Add(silo);
        }

        var path = System.IO.Path.Combine(System.IO.Path.GetTempPath(), $"silowatch-large-plant-{Guid.NewGuid():N}.json");
        File.WriteAllText(path, new JsonObject { ["Plant"] = new JsonObject { ["Sites"] = sites } }.ToJsonString());
        return new LargePlantFile(path, faults);
    }

    public void Dispose() => File.Delete(Path);
}
