using Microsoft.Extensions.Logging.Abstractions;
using SiloWatch.Storage;

// Usage:
//   write  <url> <spoolDir> <run> <count>   write <count> points (the store is expected down), flush
//                                           so they are in the spool, print "SPOOLED", then keep
//                                           writing tail points (series "tail") until killed.
//   resume <url> <spoolDir>                 open the sink on the same spool, wait until the spool is
//                                           replayed, flush, print "DRAINED" and exit 0 (2 on timeout).
// Points: series sensor{site=probe,silo=P1,sensor=LC<k>,run=<run>}, i-th point at base + i*10 ms
// with values (raw = i, value = i * 0.5, quality = k); base is the first argument after count.
if (args.Length < 3)
{
    Console.Error.WriteLine("usage: write <url> <spoolDir> <run> <count> <baseMs> | resume <url> <spoolDir>");
    return 64;
}

var options = new TimeSeriesOptions
{
    Url = args[1],
    SpoolDirectory = args[2],
    BatchSize = 500,
    FlushInterval = TimeSpan.FromMilliseconds(100),
    RequestTimeout = TimeSpan.FromSeconds(5),
    Retry = new RetryOptions { MaxAttempts = 1, BaseDelay = TimeSpan.FromMilliseconds(100), MaxDelay = TimeSpan.FromMilliseconds(500) },
};
var sink = new InfluxTimeSeriesSink(options, TimeProvider.System, NullLogger<InfluxTimeSeriesSink>.Instance, token: "");

if (args[0] == "write" && args.Length >= 6)
{
    var run = args[3];
    var count = int.Parse(args[4], System.Globalization.CultureInfo.InvariantCulture);
    var baseMs = long.Parse(args[5], System.Globalization.CultureInfo.InvariantCulture);
    var series = Enumerable.Range(0, 4)
        .Select(k => new SeriesKey(Measurements.Sensor, [new("site", "probe"), new("silo", "P1"), new("sensor", "LC" + k), new("run", run)], SensorFields.All))
        .ToArray();
    for (var i = 0; i < count; i++)
    {
        var k = i % series.Length;
        sink.Write(series[k], baseMs + (i * 10L), [i, i * 0.5, k]);
    }

    await sink.FlushAsync(CancellationToken.None);
    var health = sink.Health;
    Console.WriteLine($"SPOOLED {health.SpooledPoints} reachable={health.StoreReachable}");
    Console.Out.Flush();

    // Keep appending to the spool so the kill lands mid-write now and then.
    var tail = new SeriesKey(Measurements.Sensor, [new("site", "probe"), new("silo", "P1"), new("sensor", "tail"), new("run", run)], SensorFields.All);
    for (long j = 0; ; j++)
    {
        sink.Write(tail, baseMs + (j * 10L), [j, j * 0.5, 0]);
        if (j % 100 == 0)
        {
            await Task.Delay(1);
        }
    }
}

if (args[0] == "resume")
{
    var until = DateTime.UtcNow + TimeSpan.FromSeconds(120);
    while ((sink.HasSpooledPoints || !sink.Health.StoreReachable) && DateTime.UtcNow < until)
    {
        await Task.Delay(50);
    }

    await sink.FlushAsync(CancellationToken.None);
    var drained = !sink.HasSpooledPoints;
    var health = sink.Health;
    await sink.DisposeAsync();
    Console.WriteLine(drained ? $"DRAINED replayed={health.ReplayedPoints}" : $"TIMEOUT spool={health.SpoolBytes}");
    return drained ? 0 : 2;
}

Console.Error.WriteLine("unknown mode " + args[0]);
return 64;
