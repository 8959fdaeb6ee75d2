using SiloWatch.Simulator.Messages;
using SiloWatch.Simulator.Model;

namespace SiloWatch.Simulator.Tests.Support;

/// <summary>Runs a model to the end and keeps everything it produced.</summary>
public sealed class StreamCollector
{
    public List<TickResult> Ticks { get; } = [];

    public static StreamCollector RunToEnd(PlantModel model)
    {
        var c = new StreamCollector();
        c.Ticks.AddRange(model.Run());
        return c;
    }

    public IEnumerable<TelemetryMessage> Messages(string silo) =>
        Ticks.SelectMany(t => t.Messages).Where(m => !m.IsDuplicate && m.Message.Silo == silo).Select(m => m.Message);

    /// <summary>(message time, value) of one sensor, in publication order.</summary>
    public List<(DateTimeOffset Time, double Value)> Series(string silo, string sensor) =>
        [.. Messages(silo).SelectMany(m => m.Samples.Where(s => s.Sensor == sensor).Select(s => (m.Timestamp, s.Value)))];

    /// <summary>The last value of each listed sensor in the message at or before a time.</summary>
    public double[] Snapshot(string silo, IReadOnlyList<string> sensors, DateTimeOffset at)
    {
        var m = Messages(silo).Last(m => m.Timestamp <= at && sensors.All(id => m.Samples.Any(s => s.Sensor == id)));
        return [.. sensors.Select(id => m.Samples.First(s => s.Sensor == id).Value)];
    }
}
