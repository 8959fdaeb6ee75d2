using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Service.Hosting;

/// <summary>The mechanics model of every silo, made once at start-up from the plant definition and the material library.</summary>
public sealed class SiloModels
{
    private readonly Dictionary<string, SiloModel> _models;

    public SiloModels(PlantRegistry registry, MaterialLibrary materials)
    {
        _models = new Dictionary<string, SiloModel>(StringComparer.Ordinal);
        foreach (var silo in registry.Silos)
        {
            if (!materials.TryGet(silo.Options.Material, out var material))
            {
                throw new InvalidOperationException($"silo {silo.Key}: material '{silo.Options.Material}' is not in the material library");
            }

            _models[silo.Key] = SiloModel.Create(silo.Options, material);
        }
    }

    public SiloModel For(SiloRef silo) => _models[silo.Key];
}
