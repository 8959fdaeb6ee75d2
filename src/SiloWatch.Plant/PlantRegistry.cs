namespace SiloWatch.Plant;

/// <summary>One sensor of a silo, with its index in the silo's sensor list.</summary>
public sealed class SensorRef(int index, SensorOptions options)
{
    public int Index { get; } = index;

    public string Id { get; } = options.Id;

    public SensorOptions Options { get; } = options;
}

/// <summary>One silo with its sensors, looked up without allocation on the hot path.</summary>
public sealed class SiloRef
{
    private readonly Dictionary<string, SensorRef> _sensors;
    private readonly Dictionary<string, SensorRef>.AlternateLookup<ReadOnlySpan<char>> _sensorsBySpan;

    public SiloRef(int index, SiteOptions site, SiloOptions silo)
    {
        Index = index;
        SiteId = site.Id;
        SiloId = silo.Id;
        Key = site.Id + "/" + silo.Id;
        Site = site;
        Options = silo;
        Sensors = [.. silo.Sensors.Select((s, i) => new SensorRef(i, s))];
        _sensors = Sensors.ToDictionary(s => s.Id, StringComparer.Ordinal);
        _sensorsBySpan = _sensors.GetAlternateLookup<ReadOnlySpan<char>>();
    }

    /// <summary>Position of this silo in the registry (stable for a given plant definition).</summary>
    public int Index { get; }

    public string SiteId { get; }

    public string SiloId { get; }

    /// <summary>"site/silo".</summary>
    public string Key { get; }

    public SiteOptions Site { get; }

    public SiloOptions Options { get; }

    public IReadOnlyList<SensorRef> Sensors { get; }

    public bool TryGetSensor(ReadOnlySpan<char> id, out SensorRef sensor) =>
        _sensorsBySpan.TryGetValue(id, out sensor!);
}

/// <summary>Immutable lookup of every silo and sensor of a validated plant definition.</summary>
public sealed class PlantRegistry
{
    private readonly Dictionary<string, SiloRef> _silos;
    private readonly Dictionary<string, SiloRef>.AlternateLookup<ReadOnlySpan<char>> _silosBySpan;

    public PlantRegistry(PlantOptions plant)
    {
        Plant = plant;
        var silos = new List<SiloRef>();
        foreach (var site in plant.Sites)
        {
            foreach (var silo in site.Silos)
            {
                silos.Add(new SiloRef(silos.Count, site, silo));
            }
        }

        Silos = silos;
        _silos = silos.ToDictionary(s => s.Key, StringComparer.Ordinal);
        _silosBySpan = _silos.GetAlternateLookup<ReadOnlySpan<char>>();
    }

    public PlantOptions Plant { get; }

    public IReadOnlyList<SiloRef> Silos { get; }

    /// <summary>Looks a silo up by its "site/silo" key.</summary>
    public bool TryGetSilo(ReadOnlySpan<char> key, out SiloRef silo) => _silosBySpan.TryGetValue(key, out silo!);

    public bool TryGetSilo(string site, string silo, out SiloRef result) => _silos.TryGetValue(site + "/" + silo, out result!);
}
