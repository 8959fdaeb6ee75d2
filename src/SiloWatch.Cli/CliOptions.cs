using System.CommandLine;

namespace SiloWatch.Cli;

/// <summary>Options several commands share.</summary>
internal static class CliOptions
{
    public const string DefaultPlantPath = "config/plant.demo.json";
    public const string DefaultMaterialsPath = "config/materials.json";

    public static Option<FileInfo> Plant() => new("--plant", "-p")
    {
        Description = "Plant definition file (JSON with a top-level \"Plant\" object)",
        DefaultValueFactory = _ => new FileInfo(DefaultPlantPath),
    };

    public static Option<FileInfo> Materials() => new("--materials")
    {
        Description = "Material library file",
        DefaultValueFactory = _ => new FileInfo(DefaultMaterialsPath),
    };
}
