using SiloWatch.Plant;
using SiloWatch.Simulator.Materials;
using SiloWatch.Simulator.Messages;
using SiloWatch.Simulator.Physics;
using SiloWatch.Simulator.Scenarios;

namespace SiloWatch.Simulator.Model;

/// <summary>A message as it leaves the simulated gateway; duplicates carry the seq of the original.</summary>
public sealed record OutgoingMessage(TelemetryMessage Message, bool IsDuplicate);

/// <summary>What one sample period produced: the messages to publish now and the ground truth rows.</summary>
public sealed record TickResult(DateTimeOffset Time, TimeSpan Elapsed, IReadOnlyList<OutgoingMessage> Messages, IReadOnlyList<TruthRow> Truth);

/// <summary>Counters of what the simulated network did to the message stream.</summary>
public sealed class NetworkCounters
{
    public long Produced { get; set; }

    public long Dropped { get; set; }

    public long Buffered { get; set; }

    public long Duplicated { get; set; }

    public long Reordered { get; set; }
}

/// <summary>
/// The whole simulated plant: steps time one sample period at a time, applies the scenario's
/// events, the weather and the network's misbehaviour, and yields the messages of each tick.
/// No I/O and no clock of its own: the same inputs and seed give the same stream.
/// </summary>
public sealed class PlantModel
{
    private readonly Scenario _scenario;
    private readonly List<ScenarioEvent> _events;
    private readonly List<SiteState> _sites = [];
    private readonly List<(SiloSimulation Silo, SiteState Site)> _silos = [];
    private readonly Noise _weatherNoise;
    private readonly Noise _networkNoise;
    private readonly Dictionary<SiloSimulation, TruthRow> _lastTruth = [];
    private int _nextEvent;
    private int _cycle;
    private bool _first = true;

    public PlantModel(PlantOptions plant, IReadOnlyDictionary<string, MaterialProperties> materials, Scenario scenario, int seed, DateTimeOffset start, bool loop = false)
    {
        _scenario = scenario;
        if (scenario.SamplePeriod <= TimeSpan.Zero)
        {
            throw new InvalidDataException("scenario: SamplePeriod must be positive");
        }

        Start = start;
        Loop = loop;
        _weatherNoise = new Noise(Noise.Derive(seed, 1));
        _networkNoise = new Noise(Noise.Derive(seed, 2));
        var index = 0;
        foreach (var site in plant.Sites)
        {
            var siteState = new SiteState(site, scenario.Weather);
            _sites.Add(siteState);
            foreach (var silo in site.Silos)
            {
                if (!materials.TryGetValue(silo.Material, out var material))
                {
                    throw new InvalidDataException($"silo '{site.Id}/{silo.Id}': material '{silo.Material}' is not in the material library");
                }

                var setup = scenario.Silos.FirstOrDefault(s => s.Silo == silo.Id && (s.Site.Length == 0 || s.Site == site.Id));
                var sim = new SiloSimulation(site, silo, material, scenario, setup, Noise.Derive(seed, 100 + index++));
                _silos.Add((sim, siteState));
            }
        }

        foreach (var setup in scenario.Silos)
        {
            _ = FindSilo(setup.Site, setup.Silo);
        }

        _events = [.. scenario.Events.OrderBy(e => e.At)];
        foreach (var e in _events)
        {
            Validate(e);
        }
    }

    public DateTimeOffset Start { get; }

    public bool Loop { get; }

    public TimeSpan Elapsed { get; private set; }

    public DateTimeOffset Now => Start + Elapsed;

    public Scenario Scenario => _scenario;

    public NetworkCounters Network { get; } = new();

    public IReadOnlyList<SiloSimulation> Silos => [.. _silos.Select(s => s.Silo)];

    public bool Finished => !Loop && !_first && Elapsed >= _scenario.Duration;

    /// <summary>The weather of a site at the current instant.</summary>
    public AmbientState AmbientOf(SiteOptions site) => _sites.First(s => s.Site == site).Ambient;

    /// <summary>All ticks from the start to the end of the scenario inclusive (forever with Loop).</summary>
    public IEnumerable<TickResult> Run()
    {
        while (!Finished)
        {
            yield return Step();
        }
    }

    /// <summary>Advances one sample period (the first call produces the state at the start).</summary>
    public TickResult Step()
    {
        var dt = _scenario.SamplePeriod;
        if (!_first)
        {
            Elapsed += dt;
        }

        var dtS = dt.TotalSeconds;
        ApplyEvents();
        var now = Now;
        foreach (var site in _sites)
        {
            site.Advance(now, Elapsed, dtS, _weatherNoise);
        }

        var messages = new List<OutgoingMessage>();
        var truth = new List<TruthRow>();
        foreach (var site in _sites)
        {
            site.FlushIfReconnected(Elapsed, messages);
        }

        foreach (var (silo, site) in _silos)
        {
            var samples = silo.Step(Elapsed, dtS, site.Ambient, _first);
            if (samples.Count > 0)
            {
                var message = new TelemetryMessage(site.Site.Id, silo.Options.Id, _scenario.Publisher, ++silo.Seq, now, samples);
                Network.Produced++;
                Shape(message, site, messages);
            }

            var row = TruthOf(silo, site, now);
            if (!_lastTruth.TryGetValue(silo, out var last) || ChangedEnough(last, row))
            {
                truth.Add(row);
                _lastTruth[silo] = row;
            }
        }

        _first = false;
        if (Finished)
        {
            // The last tick: what the gateway still holds (a held-back or buffered message) goes out now.
            foreach (var site in _sites)
            {
                site.FlushAll(messages);
            }
        }

        return new TickResult(now, Elapsed, messages, truth);
    }

    private bool ChangedEnough(TruthRow last, TruthRow row) =>
        row.Time - last.Time >= _scenario.TruthInterval || row.Flow != last.Flow || row.Faults != last.Faults || row.Network != last.Network;

    private TruthRow TruthOf(SiloSimulation silo, SiteState site, DateTimeOffset now)
    {
        var (e, az) = silo.Eccentricity;
        var loads = silo.Loads;
        return new TruthRow(now, site.Site.Id, silo.Options.Id, silo.MassKg, loads.Surface.EquivalentLevelM, e, az, silo.Flow, silo.FlowRateKgPerS,
            silo.ChannelAzimuthDeg, loads.BaseLoadKn, loads.WallFrictionKn, silo.ActiveFaults(Elapsed), site.NetworkState(Elapsed))
        {
            WallA1Ratio = silo.WallA1Ratio(),
        };
    }

    private void Shape(TelemetryMessage message, SiteState site, List<OutgoingMessage> output)
    {
        if (Elapsed < site.DropoutUntil)
        {
            Network.Dropped++;
            return;
        }

        if (Elapsed < site.OutageUntil)
        {
            Network.Buffered++;
            site.Buffer.Add(message);
            return;
        }

        var key = message.Silo;
        if (site.Held.Remove(key, out var held))
        {
            output.Add(new OutgoingMessage(message, false));
            output.Add(new OutgoingMessage(held, false));
            return;
        }

        if (_networkNoise.Chance(_scenario.Network.ReorderProbability))
        {
            Network.Reordered++;
            site.Held[key] = message;
            return;
        }

        output.Add(new OutgoingMessage(message, false));
        if (_networkNoise.Chance(_scenario.Network.DuplicateProbability))
        {
            Network.Duplicated++;
            output.Add(new OutgoingMessage(message, true));
        }
    }

    private void ApplyEvents()
    {
        while (true)
        {
            if (_nextEvent >= _events.Count)
            {
                if (!Loop || _events.Count == 0 || Elapsed < (_cycle + 1) * _scenario.Duration)
                {
                    return;
                }

                _cycle++;
                _nextEvent = 0;
            }

            var e = _events[_nextEvent];
            var due = e.At + (_cycle * _scenario.Duration);
            if (due > Elapsed)
            {
                return;
            }

            _nextEvent++;
            Apply(e);
        }
    }

    private void Apply(ScenarioEvent e)
    {
        switch (e.Type)
        {
            case ScenarioEventType.Delivery:
                FindSilo(e.Site, e.Silo).Silo.StartDelivery(e, Elapsed);
                break;
            case ScenarioEventType.Discharge:
                FindSilo(e.Site, e.Silo).Silo.StartDischarge(e);
                break;
            case ScenarioEventType.Stop:
                FindSilo(e.Site, e.Silo).Silo.Stop();
                break;
            case ScenarioEventType.Fault:
                FindSilo(e.Site, e.Silo).Silo.InjectFault(e, Elapsed);
                break;
            case ScenarioEventType.Dropout:
                foreach (var site in SitesOf(e))
                {
                    site.DropoutUntil = Elapsed + (e.Duration ?? TimeSpan.FromMinutes(1));
                }

                break;
            case ScenarioEventType.Outage:
                foreach (var site in SitesOf(e))
                {
                    site.OutageUntil = Elapsed + (e.Duration ?? TimeSpan.FromMinutes(5));
                }

                break;
            case ScenarioEventType.Gust:
                foreach (var site in SitesOf(e))
                {
                    site.StartGust(Elapsed, e.GustMs, e.Duration ?? TimeSpan.FromSeconds(15), e.WindFromDeg);
                }

                break;
        }
    }

    private void Validate(ScenarioEvent e)
    {
        switch (e.Type)
        {
            case ScenarioEventType.Delivery or ScenarioEventType.Discharge:
                if (!(e.RateKgPerS > 0))
                {
                    throw new InvalidDataException($"scenario event at {e.At} ({e.Type} {e.Silo}): RateKgPerS must be positive");
                }

                _ = FindSilo(e.Site, e.Silo);
                break;
            case ScenarioEventType.Stop:
                _ = FindSilo(e.Site, e.Silo);
                break;
            case ScenarioEventType.Fault:
                var silo = FindSilo(e.Site, e.Silo).Silo;
                if (!silo.Options.Sensors.Any(s => s.Id == e.Sensor))
                {
                    throw new InvalidDataException($"scenario event at {e.At}: silo '{e.Silo}' has no sensor '{e.Sensor}'");
                }

                break;
        }
    }

    private IEnumerable<SiteState> SitesOf(ScenarioEvent e) => e.Site.Length == 0 ? _sites : _sites.Where(s => s.Site.Id == e.Site);

    private (SiloSimulation Silo, SiteState Site) FindSilo(string site, string silo)
    {
        foreach (var entry in _silos)
        {
            if (entry.Silo.Options.Id == silo && (site.Length == 0 || entry.Site.Site.Id == site))
            {
                return entry;
            }
        }

        throw new InvalidDataException($"scenario: no silo '{(site.Length > 0 ? site + "/" : "")}{silo}' in the plant");
    }

    /// <summary>Weather and link state of one site.</summary>
    private sealed class SiteState(SiteOptions site, WeatherSettings weather)
    {
        private readonly TimeZoneInfo _zone = FindZone(site.TimeZone);
        private double _windWander;
        private TimeSpan? _gustStart;
        private TimeSpan _gustLength;
        private double _gustMs;
        private double? _gustFrom;
        private double _shade;
        private double _shadeTarget;

        public SiteOptions Site { get; } = site;

        public AmbientState Ambient { get; private set; }

        public TimeSpan DropoutUntil { get; set; }

        public TimeSpan OutageUntil { get; set; }

        public List<TelemetryMessage> Buffer { get; } = [];

        public Dictionary<string, TelemetryMessage> Held { get; } = new(StringComparer.Ordinal);

        public string NetworkState(TimeSpan elapsed) => elapsed < DropoutUntil ? "dropout" : elapsed < OutageUntil ? "outage" : "";

        public void StartGust(TimeSpan now, double gustMs, TimeSpan length, double? fromDeg)
        {
            _gustStart = now;
            _gustLength = length;
            _gustMs = gustMs;
            _gustFrom = fromDeg;
        }

        public void FlushIfReconnected(TimeSpan elapsed, List<OutgoingMessage> output)
        {
            if (Buffer.Count > 0 && elapsed >= OutageUntil)
            {
                // The gateway reconnects and sends its whole buffer at once, oldest first.
                output.AddRange(Buffer.Select(m => new OutgoingMessage(m, false)));
                Buffer.Clear();
            }
        }

        public void FlushAll(List<OutgoingMessage> output)
        {
            output.AddRange(Buffer.Select(m => new OutgoingMessage(m, false)));
            Buffer.Clear();
            output.AddRange(Held.Values.OrderBy(m => m.Silo, StringComparer.Ordinal).Select(m => new OutgoingMessage(m, false)));
            Held.Clear();
        }

        public void Advance(DateTimeOffset now, TimeSpan elapsed, double dtS, Noise noise)
        {
            var local = TimeZoneInfo.ConvertTime(now, _zone);
            var hour = local.TimeOfDay.TotalHours;
            var air = SunPath.AirTemperatureC(hour, weather);
            var azimuth = SunPath.AzimuthDeg(hour, weather.SunriseHour, weather.SunsetHour);
            var intensity = SunPath.Intensity(hour, weather.SunriseHour, weather.SunsetHour);
            if (weather.PassingCloudsPerHour > 0)
            {
                // Only with passing clouds does the weather draw from the noise for them: other scenarios stay as they were.
                if (noise.Chance(weather.PassingCloudsPerHour * dtS / 3600))
                {
                    _shadeTarget = _shadeTarget > 0 ? 0 : Math.Clamp(weather.CloudShade, 0, 1);
                }

                _shade += (_shadeTarget - _shade) * (1 - Math.Exp(-dtS / 60));
                intensity *= 1 - _shade;
            }

            // Wind: a mean with a slowly wandering direction, random gusts and scripted ones (1 − cos shape).
            _windWander += (-_windWander * dtS / 600) + (15 * Math.Sqrt(2 * dtS / 600) * noise.Gaussian());
            var inGust = _gustStart is { } g && (elapsed - g) <= _gustLength;
            if (!inGust && noise.Chance(weather.GustsPerHour * dtS / 3600))
            {
                _gustStart = elapsed;
                _gustLength = TimeSpan.FromSeconds(8 + (12 * noise.Uniform()));
                _gustMs = weather.GustMs * (0.5 + noise.Uniform());
                _gustFrom = null;
            }

            var gust = 0.0;
            if (_gustStart is { } start && elapsed >= start && elapsed - start <= _gustLength)
            {
                gust = _gustMs * 0.5 * (1 - Math.Cos(2 * Math.PI * (elapsed - start).TotalSeconds / _gustLength.TotalSeconds));
            }

            var from = (_gustFrom ?? weather.WindFromDeg) + _windWander;
            Ambient = new AmbientState(air, azimuth, intensity, Math.Max(0, weather.WindMeanMs + gust), from);
        }

        private static TimeZoneInfo FindZone(string id)
        {
            try
            {
                return string.IsNullOrEmpty(id) ? TimeZoneInfo.Utc : TimeZoneInfo.FindSystemTimeZoneById(id);
            }
            catch (TimeZoneNotFoundException)
            {
                return TimeZoneInfo.Utc;
            }
        }
    }
}
