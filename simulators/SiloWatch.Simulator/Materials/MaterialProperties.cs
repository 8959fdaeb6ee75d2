using System.Text.Json;
using SiloWatch.Plant;

namespace SiloWatch.Simulator.Materials;

/// <summary>
/// Properties of one stored solid as the simulator needs them, read from config/materials.json
/// (EN 1991-4 Annex E style rows; each row names its source and confidence in the file).
/// </summary>
public sealed record MaterialProperties(
    string Name,
    double UnitWeightLowerKnM3,
    double UnitWeightUpperKnM3,
    double AngleOfReposeDeg,
    double KMean,
    double KFactor,
    double WallFrictionD1,
    double WallFrictionD2,
    double WallFrictionD3,
    double WallFrictionFactor,
    double PatchFactorCop)
{
    /// <summary>Mean of the lower and upper characteristic unit weights: a plausible bulk value for a simulated fill.</summary>
    public double UnitWeightMeanKnM3 => (UnitWeightLowerKnM3 + UnitWeightUpperKnM3) / 2;

    /// <summary>Mean wall friction for a wall category; D4 (corrugated) uses the D3 value as an effective one.</summary>
    public double WallFriction(WallCategory category) => category switch
    {
        WallCategory.D1 => WallFrictionD1,
        WallCategory.D2 => WallFrictionD2,
        _ => WallFrictionD3,
    };
}

/// <summary>A small reader of the material library: JSON with // comments, a top-level "Materials" array.</summary>
public static class MaterialReader
{
    private static readonly JsonDocumentOptions Options = new()
    {
        CommentHandling = JsonCommentHandling.Skip,
        AllowTrailingCommas = true,
    };

    public static IReadOnlyDictionary<string, MaterialProperties> LoadFile(string path)
    {
        using var stream = File.OpenRead(path);
        return Parse(stream, path);
    }

    public static IReadOnlyDictionary<string, MaterialProperties> Parse(Stream json, string sourceName = "materials")
    {
        using var doc = JsonDocument.Parse(json, Options);
        if (!doc.RootElement.TryGetProperty("Materials", out var list) || list.ValueKind != JsonValueKind.Array)
        {
            throw new InvalidDataException($"{sourceName}: no top-level \"Materials\" array");
        }

        var result = new Dictionary<string, MaterialProperties>(StringComparer.Ordinal);
        foreach (var row in list.EnumerateArray())
        {
            var name = row.TryGetProperty("Name", out var n) && n.GetString() is { Length: > 0 } s
                ? s
                : throw new InvalidDataException($"{sourceName}: a material without a Name");
            if (!row.TryGetProperty("WallFrictionMean", out var mu) || mu.ValueKind != JsonValueKind.Object)
            {
                throw new InvalidDataException($"{sourceName}: material '{name}' has no object 'WallFrictionMean' {{D1, D2, D3}}");
            }

            result[name] = new MaterialProperties(
                name,
                Number(row, "UnitWeightLowerKnM3", name, sourceName),
                Number(row, "UnitWeightUpperKnM3", name, sourceName),
                Number(row, "AngleOfReposeDeg", name, sourceName),
                Number(row, "KMean", name, sourceName),
                Number(row, "KFactor", name, sourceName),
                Number(mu, "D1", name, sourceName),
                Number(mu, "D2", name, sourceName),
                Number(mu, "D3", name, sourceName),
                Number(row, "WallFrictionFactor", name, sourceName),
                row.TryGetProperty("PatchFactorCop", out var cop) ? cop.GetDouble() : 1.0);
        }

        return result;
    }

    private static double Number(JsonElement row, string key, string material, string source)
    {
        if (!row.TryGetProperty(key, out var value) || value.ValueKind != JsonValueKind.Number)
        {
            throw new InvalidDataException($"{source}: material '{material}' has no number '{key}'");
        }

        var number = value.GetDouble();
        if (!(number > 0))
        {
            throw new InvalidDataException($"{source}: material '{material}' key '{key}' = {number}: must be positive");
        }

        return number;
    }
}
