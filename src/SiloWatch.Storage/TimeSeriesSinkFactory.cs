using Microsoft.Extensions.Logging;

namespace SiloWatch.Storage;

/// <summary>Builds the configured write path: InfluxDB sink (Url set) or embedded SQLite, behind the downsampler.</summary>
public static class TimeSeriesSinkFactory
{
    public static ITimeSeriesSink Create(StorageOptions options, TimeProvider timeProvider, ILoggerFactory loggerFactory)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(timeProvider);
        ArgumentNullException.ThrowIfNull(loggerFactory);
        ITimeSeriesSink store = options.TimeSeries.Url.Length > 0
            ? new InfluxTimeSeriesSink(options.TimeSeries, timeProvider, loggerFactory.CreateLogger<InfluxTimeSeriesSink>())
            : new SqliteTimeSeriesSink(options.EmbeddedPath, options.TimeSeries, options.EmbeddedRetention, timeProvider, loggerFactory.CreateLogger<SqliteTimeSeriesSink>());
        return options.Downsampling.Values.Any(r => r.Interval > TimeSpan.Zero)
            ? new Downsampler(store, options.Downsampling, timeProvider, loggerFactory.CreateLogger<Downsampler>())
            : store;
    }
}
