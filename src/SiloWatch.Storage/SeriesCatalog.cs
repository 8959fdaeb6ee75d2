using SiloWatch.Plant;

namespace SiloWatch.Storage;

/// <summary>
/// Every series key of a plant, built once at start-up from the plant definition so that the hot
/// path only indexes arrays: sensor series by (silo index, sensor index), estimate by silo index,
/// ring by (silo index, ring id), alarm counts by site.
/// </summary>
public sealed class SeriesCatalog
{
    private readonly SeriesKey[][] _sensors;
    private readonly SeriesKey[] _estimates;
    private readonly Dictionary<string, SeriesKey>[] _rings;
    private readonly Dictionary<string, SeriesKey> _alarms;

    public SeriesCatalog(PlantRegistry registry)
    {
        ArgumentNullException.ThrowIfNull(registry);
        var silos = registry.Silos;
        _sensors = new SeriesKey[silos.Count][];
        _estimates = new SeriesKey[silos.Count];
        _rings = new Dictionary<string, SeriesKey>[silos.Count];
        _alarms = new Dictionary<string, SeriesKey>(StringComparer.Ordinal);
        foreach (var silo in silos)
        {
            _sensors[silo.Index] = [.. silo.Sensors.Select(s => new SeriesKey(
                Measurements.Sensor,
                [new(Tags.Site, silo.SiteId), new(Tags.Silo, silo.SiloId), new(Tags.Sensor, s.Id), new(Tags.Kind, s.Options.Kind.ToString())],
                SensorFields.All))];
            _estimates[silo.Index] = new SeriesKey(
                Measurements.SiloEstimate, [new(Tags.Site, silo.SiteId), new(Tags.Silo, silo.SiloId)], SiloEstimateFields.All);
            _rings[silo.Index] = silo.Sensors
                .Select(s => s.Options.Ring)
                .Where(r => r.Length > 0)
                .Distinct(StringComparer.Ordinal)
                .ToDictionary(
                    r => r,
                    r => new SeriesKey(Measurements.Ring, [new(Tags.Site, silo.SiteId), new(Tags.Silo, silo.SiloId), new(Tags.Ring, r)], RingFields.All),
                    StringComparer.Ordinal);
            if (!_alarms.ContainsKey(silo.SiteId))
            {
                _alarms[silo.SiteId] = new SeriesKey(Measurements.Alarms, [new(Tags.Site, silo.SiteId)], AlarmFields.All);
            }
        }
    }

    /// <summary>Fields: <see cref="SensorFields.All"/> (raw, value, quality).</summary>
    public SeriesKey Sensor(int siloIndex, int sensorIndex) => _sensors[siloIndex][sensorIndex];

    /// <summary>Fields: <see cref="SiloEstimateFields.All"/>.</summary>
    public SeriesKey Estimate(int siloIndex) => _estimates[siloIndex];

    /// <summary>Fields: <see cref="RingFields.All"/>.</summary>
    public bool TryGetRing(int siloIndex, string ringId, out SeriesKey series) => _rings[siloIndex].TryGetValue(ringId, out series!);

    /// <summary>Fields: <see cref="AlarmFields.All"/>.</summary>
    public SeriesKey Alarms(string siteId) => _alarms[siteId];
}
