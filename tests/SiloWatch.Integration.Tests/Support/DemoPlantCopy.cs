using System.Text.Json.Nodes;
using System.Text.RegularExpressions;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>Copies of the demo plant file for tests (also linked into the browser tests).</summary>
public static partial class DemoPlantCopy
{
    /// <summary>
    /// A copy of the demo plant with some silos' alarm limits changed (e.g. a low overfill limit, so a
    /// test raises a real alarm from real data); returns its path.
    /// </summary>
    public static string WithLimits(params (string SiloId, string Limit, double Value)[] changes)
    {
        var text = File.ReadAllText(Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"));
        var json = JsonNode.Parse(CommentLine().Replace(text, ""))!;
        foreach (var site in json["Plant"]!["Sites"]!.AsArray())
        {
            foreach (var silo in site!["Silos"]!.AsArray())
            {
                foreach (var (siloId, limit, value) in changes)
                {
                    if ((string?)silo!["Id"] == siloId)
                    {
                        silo["AlarmLimits"]![limit] = value;
                    }
                }
            }
        }

        var path = Path.Combine(Directory.CreateTempSubdirectory("silowatch-plant-").FullName, "plant.json");
        File.WriteAllText(path, json.ToJsonString());
        return path;
    }

    [GeneratedRegex(@"^\s*//.*$", RegexOptions.Multiline)]
    private static partial Regex CommentLine();
}
