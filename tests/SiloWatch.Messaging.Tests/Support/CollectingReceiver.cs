using SiloWatch.Plant;

namespace SiloWatch.Messaging.Tests.Support;

/// <summary>Keeps every sample and rejection the decoder delivers.</summary>
public sealed class CollectingReceiver : ITelemetryReceiver
{
    public List<TelemetrySample> Samples { get; } = [];

    public List<TelemetryRejection> Rejections { get; } = [];

    public void OnSample(in TelemetrySample sample) => Samples.Add(sample);

    public void OnRejected(TelemetryRejection rejection) => Rejections.Add(rejection);

    public TelemetryRejection SingleRejection() => Assert.Single(Rejections);

    public void Clear()
    {
        Samples.Clear();
        Rejections.Clear();
    }
}

/// <summary>Counts without storing: for allocation checks and the fuzz run.</summary>
public sealed class CountingReceiver : ITelemetryReceiver
{
    public int Samples { get; private set; }

    public int Rejections { get; private set; }

    public Action<TelemetryRejection>? OnRejection { get; set; }

    public void OnSample(in TelemetrySample sample) => Samples++;

    public void OnRejected(TelemetryRejection rejection)
    {
        Rejections++;
        OnRejection?.Invoke(rejection);
    }
}
