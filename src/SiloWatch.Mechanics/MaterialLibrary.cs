using System.Collections.Frozen;
using System.Text.Json;
using System.Text.Json.Serialization;

namespace SiloWatch.Mechanics;

/// <summary>A bad material file or row: names the file, the material (or row number) and the key.</summary>
public sealed class MaterialLibraryException(string file, string material, string key, string problem)
    : Exception($"material library '{file}': material '{material}': key '{key}': {problem}")
{
    public string File { get; } = file;

    public string Material { get; } = material;

    public string Key { get; } = key;

    public string Problem { get; } = problem;
}

/// <summary>
/// The stored solids the plant may hold, read from a JSON file with // comments (config/materials.json).
/// Users add their own materials (lab-measured values) as further rows, or in a second file whose rows
/// replace same-named ones (see <see cref="Load(string, string[])"/>).
/// </summary>
public sealed class MaterialLibrary
{
    private readonly FrozenDictionary<string, Material> _materials;

    private MaterialLibrary(Dictionary<string, Material> materials, IReadOnlyList<string> replaced)
    {
        _materials = materials.ToFrozenDictionary(StringComparer.Ordinal);
        Names = _materials.Keys.ToFrozenSet(StringComparer.Ordinal);
        Replaced = replaced;
    }

    /// <summary>Material names (ordinal, case-sensitive: the plant definition refers to them exactly).</summary>
    public IReadOnlySet<string> Names { get; }

    /// <summary>Names that a later file replaced (so a report can say the standard row was overridden).</summary>
    public IReadOnlyList<string> Replaced { get; }

    public IEnumerable<Material> Materials => _materials.Values;

    public bool TryGet(string name, out Material material) => _materials.TryGetValue(name, out material!);

    public Material Get(string name) =>
        _materials.TryGetValue(name, out var m)
            ? m
            : throw new KeyNotFoundException($"material '{name}' is not in the material library (known: {string.Join(", ", Names.Order(StringComparer.Ordinal))})");

    /// <summary>Loads a library file; each further file adds rows and replaces rows of the same name.</summary>
    /// <exception cref="MaterialLibraryException">a file is missing, not JSON, or a row is bad; the message names file, material and key.</exception>
    public static MaterialLibrary Load(string path, params string[] morePaths)
    {
        var materials = new Dictionary<string, Material>(StringComparer.Ordinal);
        var replaced = new List<string>();
        foreach (var file in morePaths.Prepend(path))
        {
            if (!File.Exists(file))
            {
                throw new MaterialLibraryException(file, "", "file", "file not found");
            }

            var rows = Parse(File.ReadAllText(file), file);
            foreach (var m in rows)
            {
                if (!materials.TryAdd(m.Name, m))
                {
                    materials[m.Name] = m;
                    replaced.Add(m.Name);
                }
            }

        }

        return new MaterialLibrary(materials, replaced);
    }

    /// <summary>Builds a library from rows already in memory (tests, tools); rows are validated as from a file.</summary>
    public static MaterialLibrary FromMaterials(IEnumerable<Material> materials, string origin = "(in memory)")
    {
        var dict = new Dictionary<string, Material>(StringComparer.Ordinal);
        foreach (var m in materials)
        {
            Validate(m, origin);
            if (!dict.TryAdd(m.Name, m))
            {
                throw new MaterialLibraryException(origin, m.Name, "Name", "the name is used twice");
            }
        }

        return new MaterialLibrary(dict, []);
    }

    /// <summary>A copy of this library with one material added or replaced (a lab value, say).</summary>
    public MaterialLibrary With(Material material)
    {
        Validate(material, "(added)");
        var dict = new Dictionary<string, Material>(_materials, StringComparer.Ordinal);
        var replaced = new List<string>(Replaced);
        if (dict.ContainsKey(material.Name))
        {
            replaced.Add(material.Name);
        }

        dict[material.Name] = material;
        return new MaterialLibrary(dict, replaced);
    }

    /// <summary>Parses the text of one library file; <paramref name="file"/> only names it in errors.</summary>
    public static IReadOnlyList<Material> Parse(string json, string file)
    {
        MaterialFileDto? dto;
        try
        {
            dto = JsonSerializer.Deserialize(json, MaterialJsonContext.Default.MaterialFileDto);
        }
        catch (JsonException ex)
        {
            var (material, key) = Locate(json, ex.Path);
            throw new MaterialLibraryException(file, material, key, $"not valid (line {ex.LineNumber + 1}): {ex.Message}");
        }

        if (dto?.Materials is null)
        {
            throw new MaterialLibraryException(file, "", "Materials", "the file has no top-level \"Materials\" array");
        }

        var result = new List<Material>(dto.Materials.Count);
        var names = new HashSet<string>(StringComparer.Ordinal);
        for (var i = 0; i < dto.Materials.Count; i++)
        {
            var row = dto.Materials[i];
            var label = string.IsNullOrWhiteSpace(row.Name) ? $"#{i + 1}" : row.Name;
            var material = new Material(
                Name: row.Name ?? throw new MaterialLibraryException(file, label, "Name", "missing"),
                Description: row.Description ?? "",
                UnitWeightLowerKnM3: Required(row.UnitWeightLowerKnM3, nameof(row.UnitWeightLowerKnM3)),
                UnitWeightUpperKnM3: Required(row.UnitWeightUpperKnM3, nameof(row.UnitWeightUpperKnM3)),
                AngleOfReposeDeg: Required(row.AngleOfReposeDeg, nameof(row.AngleOfReposeDeg)),
                KMean: Required(row.KMean, nameof(row.KMean)),
                KFactor: Required(row.KFactor, nameof(row.KFactor)),
                WallFrictionMean: new WallFriction(
                    Required(row.WallFrictionMean?.D1, "WallFrictionMean.D1"),
                    Required(row.WallFrictionMean?.D2, "WallFrictionMean.D2"),
                    Required(row.WallFrictionMean?.D3, "WallFrictionMean.D3"),
                    row.WallFrictionMean?.D4),
                WallFrictionFactor: Required(row.WallFrictionFactor, nameof(row.WallFrictionFactor)),
                PatchFactorCop: Required(row.PatchFactorCop, nameof(row.PatchFactorCop)),
                Source: row.Source ?? throw new MaterialLibraryException(file, label, "Source", "missing: say where the values come from (standard, lab report)"),
                Confidence: row.Confidence ?? throw new MaterialLibraryException(file, label, "Confidence", "missing: say how sure each value is"));
            Validate(material, file);
            if (!names.Add(material.Name))
            {
                throw new MaterialLibraryException(file, label, "Name", "the name is used twice in this file");
            }

            result.Add(material);

            double Required(double? value, string key) =>
                value ?? throw new MaterialLibraryException(file, label, key, "missing");
        }

        return result;
    }

    /// <summary>Checks the physical sense of every value of a row.</summary>
    public static void Validate(Material m, string file)
    {
        var label = string.IsNullOrWhiteSpace(m.Name) ? "(no name)" : m.Name;
        void Check(bool ok, string key, double value, string problem)
        {
            if (!ok)
            {
                throw new MaterialLibraryException(file, label, key, $"{value.ToString(System.Globalization.CultureInfo.InvariantCulture)}: {problem}");
            }
        }

        if (string.IsNullOrWhiteSpace(m.Name))
        {
            throw new MaterialLibraryException(file, label, "Name", "must not be empty");
        }

        Check(m.UnitWeightLowerKnM3 is > 0 and < 100, "UnitWeightLowerKnM3", m.UnitWeightLowerKnM3, "unit weight must be in (0, 100) kN/m3");
        Check(m.UnitWeightUpperKnM3 is > 0 and < 100, "UnitWeightUpperKnM3", m.UnitWeightUpperKnM3, "unit weight must be in (0, 100) kN/m3");
        Check(m.UnitWeightUpperKnM3 >= m.UnitWeightLowerKnM3, "UnitWeightUpperKnM3", m.UnitWeightUpperKnM3, "upper unit weight is below the lower one");
        Check(m.AngleOfReposeDeg is >= 0 and < 90, "AngleOfReposeDeg", m.AngleOfReposeDeg, "angle of repose must be in [0, 90) degrees");
        Check(m.KMean is > 0 and <= 1.5, "KMean", m.KMean, "lateral pressure ratio must be in (0, 1.5]");
        Check(m.KFactor is >= 1 and <= 3, "KFactor", m.KFactor, "conversion factor a_K must be in [1, 3]");
        Check(m.WallFrictionMean.D1 is > 0 and < 1.5, "WallFrictionMean.D1", m.WallFrictionMean.D1, "wall friction must be in (0, 1.5)");
        Check(m.WallFrictionMean.D2 is > 0 and < 1.5, "WallFrictionMean.D2", m.WallFrictionMean.D2, "wall friction must be in (0, 1.5)");
        Check(m.WallFrictionMean.D3 is > 0 and < 1.5, "WallFrictionMean.D3", m.WallFrictionMean.D3, "wall friction must be in (0, 1.5)");
        if (m.WallFrictionMean.D4 is { } d4)
        {
            Check(d4 is > 0 and < 1.5, "WallFrictionMean.D4", d4, "wall friction must be in (0, 1.5)");
        }

        Check(m.WallFrictionFactor is >= 1 and <= 3, "WallFrictionFactor", m.WallFrictionFactor, "conversion factor a_mu must be in [1, 3]");
        Check(m.PatchFactorCop is >= 0 and <= 3, "PatchFactorCop", m.PatchFactorCop, "patch reference factor C_op must be in [0, 3]");
        if (string.IsNullOrWhiteSpace(m.Source))
        {
            throw new MaterialLibraryException(file, label, "Source", "must not be empty: say where the values come from");
        }
    }

    // Maps a JSON path like "$.Materials[3].KMean" to the row's name (when it can be read) and the key.
    private static (string Material, string Key) Locate(string json, string? path)
    {
        if (string.IsNullOrEmpty(path))
        {
            return ("", "");
        }

        var match = System.Text.RegularExpressions.Regex.Match(path, @"^\$\.Materials\[(\d+)\]\.?(.*)$");
        if (!match.Success)
        {
            return ("", path);
        }

        var index = int.Parse(match.Groups[1].Value, System.Globalization.CultureInfo.InvariantCulture);
        var key = match.Groups[2].Value;
        var label = $"#{index + 1}";
        try
        {
            using var doc = JsonDocument.Parse(json, new JsonDocumentOptions { CommentHandling = JsonCommentHandling.Skip, AllowTrailingCommas = true });
            var rows = doc.RootElement.GetProperty("Materials");
            if (index < rows.GetArrayLength() && rows[index].TryGetProperty("Name", out var name) && name.ValueKind == JsonValueKind.String)
            {
                label = name.GetString()!;
            }
        }
        catch (JsonException)
        {
            // The text is broken beyond the failing row: keep the row number.
        }
        catch (InvalidOperationException)
        {
        }
        catch (KeyNotFoundException)
        {
        }

        return (label, key);
    }
}

internal sealed class MaterialFileDto
{
    public List<MaterialRowDto>? Materials { get; set; }
}

internal sealed class MaterialRowDto
{
    public string? Name { get; set; }

    public string? Description { get; set; }

    public double? UnitWeightLowerKnM3 { get; set; }

    public double? UnitWeightUpperKnM3 { get; set; }

    public double? AngleOfReposeDeg { get; set; }

    public double? KMean { get; set; }

    public double? KFactor { get; set; }

    public WallFrictionDto? WallFrictionMean { get; set; }

    public double? WallFrictionFactor { get; set; }

    public double? PatchFactorCop { get; set; }

    public string? Source { get; set; }

    public string? Confidence { get; set; }
}

internal sealed class WallFrictionDto
{
    public double? D1 { get; set; }

    public double? D2 { get; set; }

    public double? D3 { get; set; }

    public double? D4 { get; set; }
}

[JsonSourceGenerationOptions(
    ReadCommentHandling = JsonCommentHandling.Skip,
    AllowTrailingCommas = true,
    UnmappedMemberHandling = JsonUnmappedMemberHandling.Disallow)]
[JsonSerializable(typeof(MaterialFileDto))]
internal sealed partial class MaterialJsonContext : JsonSerializerContext;
