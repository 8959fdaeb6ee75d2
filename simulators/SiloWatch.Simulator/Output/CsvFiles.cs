using System.Globalization;
using SiloWatch.Simulator.Messages;
using SiloWatch.Simulator.Model;

namespace SiloWatch.Simulator.Output;

/// <summary>Ground truth of a run as CSV: one row per silo per truth interval and at each change of state.</summary>
public sealed class TruthCsvWriter : IDisposable
{
    public const string Header = "time,site,silo,mass_kg,level_m,eccentricity_m,eccentricity_azimuth_deg,flow,flow_rate_kg_per_s,channel_azimuth_deg,wall_a1_ratio,floor_load_kn,wall_friction_kn,faults,network";

    private readonly TextWriter _writer;

    public TruthCsvWriter(TextWriter writer)
    {
        _writer = writer;
        _writer.WriteLine(Header);
    }

    public static TruthCsvWriter Create(string path)
    {
        var dir = Path.GetDirectoryName(Path.GetFullPath(path));
        if (dir is not null)
        {
            Directory.CreateDirectory(dir);
        }

        return new TruthCsvWriter(new StreamWriter(path, append: false) { NewLine = "\n" });
    }

    public void Write(TruthRow r)
    {
        var c = CultureInfo.InvariantCulture;
        _writer.WriteLine(string.Join(',',
            TelemetryMessage.FormatTimestamp(r.Time),
            r.Site,
            r.Silo,
            r.MassKg.ToString("F1", c),
            r.LevelM.ToString("F3", c),
            r.EccentricityM.ToString("F4", c),
            r.EccentricityAzimuthDeg.ToString("F1", c),
            r.Flow.ToString().ToLowerInvariant(),
            r.FlowRateKgPerS.ToString("F2", c),
            r.ChannelAzimuthDeg?.ToString("F1", c) ?? "",
            r.WallA1Ratio.ToString("F4", c),
            r.FloorLoadKn.ToString("F2", c),
            r.WallFrictionKn.ToString("F2", c),
            r.Faults,
            r.Network));
    }

    public void Dispose() => _writer.Dispose();
}

/// <summary>Every published sample as CSV (time,site,silo,sensor,value,unit): the input of a replay.</summary>
public sealed class RecordCsvWriter : IDisposable
{
    public const string Header = "time,site,silo,sensor,value,unit";

    private readonly TextWriter _writer;

    public RecordCsvWriter(TextWriter writer)
    {
        _writer = writer;
        _writer.WriteLine(Header);
    }

    public static RecordCsvWriter Create(string path)
    {
        var dir = Path.GetDirectoryName(Path.GetFullPath(path));
        if (dir is not null)
        {
            Directory.CreateDirectory(dir);
        }

        return new RecordCsvWriter(new StreamWriter(path, append: false) { NewLine = "\n" });
    }

    public void Write(TelemetryMessage m)
    {
        foreach (var s in m.Samples)
        {
            _writer.Write(TelemetryMessage.FormatTimestamp(s.Timestamp ?? m.Timestamp));
            _writer.Write(',');
            _writer.Write(m.Site);
            _writer.Write(',');
            _writer.Write(m.Silo);
            _writer.Write(',');
            _writer.Write(s.Sensor);
            _writer.Write(',');
            _writer.Write(s.Value.ToString("R", CultureInfo.InvariantCulture));
            _writer.Write(',');
            _writer.WriteLine(s.Unit);
        }
    }

    public void Dispose() => _writer.Dispose();
}
