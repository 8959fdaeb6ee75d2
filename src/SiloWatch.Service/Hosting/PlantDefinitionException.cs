using SiloWatch.Plant;

namespace SiloWatch.Service.Hosting;

/// <summary>The plant definition has findings: the service must not start.</summary>
public sealed class PlantDefinitionException(string path, IReadOnlyList<PlantFinding> findings)
    : Exception($"{findings.Count} finding(s) in the plant definition {path}")
{
    public string Path { get; } = path;

    public IReadOnlyList<PlantFinding> Findings { get; } = findings;
}
