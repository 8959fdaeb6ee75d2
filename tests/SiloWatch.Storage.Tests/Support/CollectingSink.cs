namespace SiloWatch.Storage.Tests.Support;

/// <summary>A sink that keeps every point it is given, with field names, for assertions.</summary>
public sealed class CollectingSink : ITimeSeriesSink
{
    private readonly Lock _lock = new();
    private readonly List<CollectedPoint> _points = [];

    public IReadOnlyList<CollectedPoint> Points
    {
        get
        {
            lock (_lock)
            {
                return [.. _points];
            }
        }
    }

    public int Flushes { get; private set; }

    public bool Disposed { get; private set; }

    public StorageHealth Health => new() { Backend = "collecting", StoreReachable = true };

    public void Write(SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
    {
        var fields = new Dictionary<string, double>(StringComparer.Ordinal);
        for (var i = 0; i < values.Length; i++)
        {
            fields[series.FieldNames[i]] = values[i];
        }

        lock (_lock)
        {
            _points.Add(new CollectedPoint(series, timestampMs, fields));
        }
    }

    public Task FlushAsync(CancellationToken ct)
    {
        Flushes++;
        return Task.CompletedTask;
    }

    public ValueTask DisposeAsync()
    {
        Disposed = true;
        return default;
    }
}

public sealed record CollectedPoint(SeriesKey Series, long TimestampMs, IReadOnlyDictionary<string, double> Fields);
