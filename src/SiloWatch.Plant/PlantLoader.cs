using Microsoft.Extensions.Configuration;

namespace SiloWatch.Plant;

/// <summary>Reads a plant definition from configuration, turning binding errors into findings.</summary>
public static class PlantLoader
{
    /// <summary>Binds the <see cref="PlantOptions.SectionName"/> section; unknown keys and bad values become findings.</summary>
    public static (PlantOptions Plant, IReadOnlyList<PlantFinding> Findings) Bind(IConfiguration configuration)
    {
        var plant = new PlantOptions();
        var section = configuration.GetSection(PlantOptions.SectionName);
        if (!section.Exists())
        {
            return (plant, [new("", "", "", PlantOptions.SectionName, "", "the configuration has no Plant section")]);
        }

        try
        {
            section.Bind(plant, o => o.ErrorOnUnknownConfiguration = true);
        }
        catch (InvalidOperationException ex)
        {
            // The binder names the key and the value in its message; keep the innermost, most specific one.
            var inner = ex;
            while (inner.InnerException is InvalidOperationException next)
            {
                inner = next;
            }

            return (plant, [new("", "", "", PlantOptions.SectionName, "", inner.Message)]);
        }

        return (plant, []);
    }

    /// <summary>Loads and validates a plant file (JSON with a top-level "Plant" object).</summary>
    public static (PlantOptions Plant, IReadOnlyList<PlantFinding> Findings) LoadFile(string path, IReadOnlySet<string>? knownMaterials = null)
    {
        if (!File.Exists(path))
        {
            return (new PlantOptions(), [new("", "", "", "file", path, "plant definition file not found")]);
        }

        IConfiguration configuration;
        try
        {
            configuration = new ConfigurationBuilder().Add(JsonFile(Path.GetFullPath(path))).Build();
        }
        catch (Exception ex) when (ex is FormatException or InvalidDataException or System.Text.Json.JsonException)
        {
            return (new PlantOptions(), [new("", "", "", "file", path, "not valid JSON: " + ex.Message)]);
        }

        var (plant, findings) = Bind(configuration);
        if (findings.Count > 0)
        {
            return (plant, findings);
        }

        return (plant, PlantValidator.Validate(plant, knownMaterials));
    }

    /// <summary>
    /// The plant file as a configuration source: the JSON provider with an index of child keys, so that binding a plant
    /// of hundreds of silos takes time in proportion to its size (see <see cref="IndexedJsonConfigurationSource"/>).
    /// </summary>
    public static IConfigurationSource JsonFile(string fullPath)
    {
        var source = new IndexedJsonConfigurationSource { Path = fullPath, Optional = false, ReloadOnChange = false };
        source.ResolveFileProvider();
        return source;
    }
}
