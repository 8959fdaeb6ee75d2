using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using SiloWatch.Storage.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Storage.Tests;

/// <summary>The InfluxDB write path against a real VictoriaMetrics (it takes /api/v2/write and maps measurement m, field f to metric m_f).</summary>
public sealed class InfluxTimeSeriesSinkTests(ITestOutputHelper output) : IDisposable
{
    private static readonly TimeSpan Generous = TimeSpan.FromSeconds(90);
    private readonly TempDirectory _dir = new();
    private readonly TestLogger<InfluxTimeSeriesSink> _log = new(output);

    public void Dispose() => _dir.Dispose();

    private InfluxTimeSeriesSink Sink(TimeSeriesOptions options) => new(options, TimeProvider.System, _log, token: "");

    [Fact]
    public async Task WrittenPointsComeBackWithTheirNamesTagsValuesAndMillisecondTimestamps()
    {
        if (!VmEnvironment.Available(output, url: true))
        {
            return;
        }

        var run = Some.RunId();
        var s1 = Some.SensorSeries(run, "S1", "LC1");
        var s2 = Some.SensorSeries(run, "S2", "AX-R1-090");
        var baseMs = Some.RecentBaseMs() + 123; // not on a whole second: precision must be ms
        await using (var sink = Sink(Some.FastOptions(VmEnvironment.Url!, _dir.File("spool"))))
        {
            for (var i = 0; i < 1000; i++)
            {
                sink.Write(s1, baseMs + i, [i * 0.001, (i * 12.5) - 3000, 0]);
                sink.Write(s2, baseMs + i, [-i, 1e-7 * i, i % 2 == 0 ? 0 : double.NaN]);
            }

            await sink.FlushAsync(CancellationToken.None);
            Assert.Equal(2000, sink.Health.WrittenPoints);
            Assert.True(sink.Health.IsHealthy);
        }

        using var vm = new VmReader(VmEnvironment.Url!);
        var series = await vm.ExportWhenAsync($"{{__name__=~\"sensor_(raw|value|quality)\",run=\"{run}\"}}", s => s.Sum(x => x.Values.Length) >= 5500, Generous);

        Assert.Equal(["sensor_quality", "sensor_quality", "sensor_raw", "sensor_raw", "sensor_value", "sensor_value"], series.Select(s => s.Name).Order());
        var value1 = series.Single(s => s.Name == "sensor_value" && s.Labels["silo"] == "S1");
        Assert.Equal(new Dictionary<string, string> { ["site"] = "brackenford", ["silo"] = "S1", ["sensor"] = "LC1", ["kind"] = "LoadCell", ["run"] = run }, value1.Labels);
        Assert.Equal(Enumerable.Range(0, 1000).Select(i => baseMs + i), value1.Timestamps);
        Assert.Equal(Enumerable.Range(0, 1000).Select(i => (i * 12.5) - 3000), value1.Values);
        var raw2 = series.Single(s => s.Name == "sensor_raw" && s.Labels["silo"] == "S2");
        Assert.Equal(Enumerable.Range(0, 1000).Select(i => (double)-i), raw2.Values);
        var value2 = series.Single(s => s.Name == "sensor_value" && s.Labels["silo"] == "S2");
        // VictoriaMetrics keeps about 15 significant digits, not every bit of a double.
        Assert.All(value2.Values.Zip(Enumerable.Range(0, 1000)), p => Assert.Equal(1e-7 * p.Second, p.First, 1e-18));
        var quality2 = series.Single(s => s.Name == "sensor_quality" && s.Labels["silo"] == "S2");
        Assert.Equal(Enumerable.Range(0, 500).Select(i => baseMs + (2 * i)), quality2.Timestamps); // NaN left out, not sent as 0
    }

    /// <summary>
    /// VictoriaMetrics with -dedup.minScrapeInterval=1ms keeps one sample per series and timestamp, but
    /// not reliably the newer one: measured with Debian's victoria-metrics 1.79.5, once the first write
    /// is in a stored part, which of the two survives differs from metric to metric of the same point
    /// (in one run: raw the rewrite, value the first write); later releases keep the largest value of
    /// one timestamp (lib/storage/dedup.go in its sources). So only "once" is checked, and that the
    /// value is one of the two writes, not a sum or a mix.
    /// </summary>
    [Fact]
    public async Task OnVictoriaMetricsAnIntervalWrittenAgainForALatePointIsKeptOnceAsOneOfItsTwoWrites()
    {
        if (!VmEnvironment.Available(output, url: true))
        {
            return;
        }

        var run = Some.RunId();
        var s = Some.SensorSeries(run);
        var t0 = Some.RecentBaseMs();
        var store = Sink(Some.FastOptions(VmEnvironment.Url!, _dir.File("spool")));
        await using var sink = new Downsampler(store, new StorageOptions().Downsampling, TimeProvider.System, new TestLogger<Downsampler>(output));
        sink.CloseIdleByCaller(s);
        sink.Write(s, t0 + 100, [1, 10, 0]);
        sink.Write(s, t0 + 600, [3, 30, 0]);
        sink.Write(s, t0 + 1_000, [5, 50, 0]); // closes the first second: mean 20
        await ((ITimeSeriesSink)sink).FlushStoredAsync(CancellationToken.None);
        using var vm = new VmReader(VmEnvironment.Url!);
        var selector = $"{{__name__=~\"sensor_(raw|value|value_min)\",run=\"{run}\"}}";
        var first = await vm.ExportWhenAsync(selector, x => x.Count == 3, Generous);
        Assert.Equal(3, first.Count);

        sink.Write(s, t0 + 900, [-1, -40, 0]); // late: the interval is written again with mean 0
        await ((ITimeSeriesSink)sink).FlushStoredAsync(CancellationToken.None);
        Assert.Equal(2, store.Health.WrittenPoints);

        var series = await vm.ExportAsync(selector);
        Assert.Equal(3, series.Count);
        Assert.All(series, x => Assert.Equal([t0], x.Timestamps)); // once
        Assert.Contains(series.Single(x => x.Name == "sensor_value").Values.Single(), new[] { 20.0, 0.0 });    // (10+30)/2 or (10+30-40)/3
        Assert.Contains(series.Single(x => x.Name == "sensor_raw").Values.Single(), new[] { 2.0, 1.0 });       // (1+3)/2 or (1+3-1)/3
        Assert.Contains(series.Single(x => x.Name == "sensor_value_min").Values.Single(), new[] { 10.0, -40.0 });
    }

    [Fact]
    public async Task TagValuesAndNamesWithSpacesCommasAndEqualsSignsArriveIntact()
    {
        if (!VmEnvironment.Available(output, url: true))
        {
            return;
        }

        var run = Some.RunId();
        var odd = new SeriesKey(
            "silo estimate,x",
            [new("site", "Brackenford East, bay=3"), new("silo name", "S 1"), new("k=v", "a=b,c d"), new("run", run)],
            "mass kg", "lvl,m", "q=1");
        var ts = Some.RecentBaseMs() + 7;
        await using (var sink = Sink(Some.FastOptions(VmEnvironment.Url!, _dir.File("spool"))))
        {
            sink.Write(odd, ts, [123456.5, 7.25, 1]);
            await sink.FlushAsync(CancellationToken.None);
            Assert.Equal(1, sink.Health.WrittenPoints);
        }

        using var vm = new VmReader(VmEnvironment.Url!);
        var series = await vm.ExportWhenAsync($"{{__name__=~\"silo estimate,x_.*\",run=\"{run}\"}}", s => s.Count >= 3, Generous);

        Assert.Equal(["silo estimate,x_lvl,m", "silo estimate,x_mass kg", "silo estimate,x_q=1"], series.Select(s => s.Name).Order());
        foreach (var s in series)
        {
            Assert.Equal("Brackenford East, bay=3", s.Labels["site"]);
            Assert.Equal("S 1", s.Labels["silo name"]);
            Assert.Equal("a=b,c d", s.Labels["k=v"]);
            Assert.Equal([ts], s.Timestamps);
        }

        Assert.Equal([123456.5], series.Single(s => s.Name.EndsWith("mass kg", StringComparison.Ordinal)).Values);
    }

    [Fact]
    public async Task WhileTheStoreIsUnreachablePointsFillTheSpoolWhichRaisesItsFlagAndStaysBounded()
    {
        var options = Some.FastOptions($"http://127.0.0.1:{Some.ClosedPort()}", _dir.File("spool"));
        options.SpoolMaxBytes = StorageOptionsValidator.MinSpoolBytes;
        options.SpoolAlarmPercent = 50;
        var series = Some.SensorSeries("unreachable");
        await using var sink = Sink(options);
        var i = 0;
        void WritePoints(int n)
        {
            for (var end = i + n; i < end; i++)
            {
                sink.Write(series, 1_700_000_000_000 + i, [i, i, 0]);
            }
        }

        WritePoints(100);
        await sink.FlushAsync(CancellationToken.None);
        var early = sink.Health;
        Assert.False(early.StoreReachable);
        Assert.NotNull(early.LastError);
        Assert.Equal(100, early.SpooledPoints);
        Assert.InRange(early.SpoolBytes, 1, options.SpoolMaxBytes / 2);
        Assert.False(early.SpoolNearlyFull);

        while (sink.Health.SpoolBytes < options.SpoolMaxBytes * 0.6)
        {
            WritePoints(100);
            await sink.FlushAsync(CancellationToken.None);
        }

        var nearlyFull = sink.Health;
        Assert.True(nearlyFull.SpoolNearlyFull);
        Assert.Equal(0, nearlyFull.DiscardedPoints);
        Assert.False(nearlyFull.IsHealthy);
        Assert.True(_log.Logged(Microsoft.Extensions.Logging.LogLevel.Warning, "nearly full"));

        WritePoints(2000);
        await sink.FlushAsync(CancellationToken.None);
        var full = sink.Health;
        Assert.True(full.DiscardedPoints > 0);
        Assert.InRange(full.SpoolBytes, 1, options.SpoolMaxBytes);
        Assert.Equal(i, full.SpooledPoints);
        Assert.True(_log.Logged(Microsoft.Extensions.Logging.LogLevel.Error, "discarded"));
    }

    [Fact]
    public async Task WhenTheBufferIsFullWhileTheStoreHangsTheCallingThreadSpoolsTheOverflowAndNothingIsLost()
    {
        // A "store" that accepts connections and never answers: the writer is stuck on its first batch.
        using var blackHole = new TcpListener(IPAddress.Loopback, 0);
        blackHole.Start();
        var held = new List<Socket>();
        var accepting = Task.Run(async () =>
        {
            try
            {
                while (true)
                {
                    var socket = await blackHole.AcceptSocketAsync();
                    lock (held)
                    {
                        held.Add(socket);
                    }
                }
            }
            catch (Exception ex) when (ex is SocketException or ObjectDisposedException or InvalidOperationException)
            {
            }
        });
        var options = Some.FastOptions($"http://127.0.0.1:{((IPEndPoint)blackHole.LocalEndpoint).Port}", _dir.File("spool"));
        options.BatchSize = 100;
        options.BufferCapacityPoints = 100;
        options.RequestTimeout = TimeSpan.FromMinutes(2);
        var series = Some.SensorSeries("hang");
        var sink = Sink(options);

        for (var i = 0; i < 1000; i++)
        {
            sink.Write(series, 1_700_000_000_000 + i, [i, i, 0]);
        }

        // The first batch is with the writer (counted in the buffer until its request ends), so later
        // full batches overflow: the calling thread put them in the spool itself.
        var health = sink.Health;
        output.WriteLine(health.ToString());
        Assert.True(health.OverflowPoints >= 100, $"{health.OverflowPoints} points overflowed");
        Assert.True(health.SpooledPoints >= health.OverflowPoints);

        blackHole.Stop();
        lock (held)
        {
            held.ForEach(s => s.Dispose());
        }

        await accepting;
        await sink.FlushAsync(CancellationToken.None);
        await sink.DisposeAsync();

        using var spool = new DiskSpool(options.SpoolDirectory, options.SpoolMaxBytes, _log);
        var timestamps = new List<long>();
        while (spool.TryReadChunk(1000, out var chunk))
        {
            timestamps.AddRange(chunk.Text.Split('\n').Select(l => long.Parse(l[(l.LastIndexOf(' ') + 1)..], System.Globalization.CultureInfo.InvariantCulture)));
            spool.Commit(chunk);
        }

        Assert.Equal(Enumerable.Range(0, 1000).Select(i => 1_700_000_000_000L + i), timestamps.Order());
    }

    [Fact]
    public async Task WhenTheStoreStopsMidStreamAndComesBackEveryPointIsStoredExactlyOnce()
    {
        if (!VmEnvironment.Available(output, binary: true))
        {
            return;
        }

        await using var vm = await VmServer.StartAsync(VmEnvironment.Binary!, _dir.File("vm"), output);
        var run = Some.RunId();
        var keys = Enumerable.Range(1, 4).Select(k => Some.SensorSeries(run, "S" + k)).ToArray();
        var baseMs = Some.RecentBaseMs();
        var written = new int[keys.Length];
        var stop = 0;
        await using var sink = Sink(Some.FastOptions(vm.Url, _dir.File("spool")));

        // Two worker threads, two series each, as the pipeline's partitions would write.
        var producers = Enumerable.Range(0, 2).Select(worker => Task.Run(async () =>
        {
            for (var i = 0; i < 20_000 && Volatile.Read(ref stop) == 0; i++)
            {
                foreach (var k in new[] { worker * 2, (worker * 2) + 1 })
                {
                    sink.Write(keys[k], baseMs + (i * 10L), [i, i * 0.5, k]);
                    written[k] = i + 1;
                }

                if (i % 50 == 0)
                {
                    await Task.Delay(5);
                }
            }
        })).ToArray();

        Assert.True(await Some.EventuallyAsync(() => sink.Health.WrittenPoints >= 2000, Generous), "no points were stored before the outage");
        await vm.StopAsync();
        var spooledBefore = sink.Health.SpooledPoints;
        Assert.True(await Some.EventuallyAsync(() => !sink.Health.StoreReachable && sink.Health.SpooledPoints >= spooledBefore + 2000, Generous), "points did not go to the spool during the outage");
        await vm.StartAsync();
        Assert.True(await Some.EventuallyAsync(() => sink.Health.StoreReachable && sink.Health.ReplayedPoints > 0, Generous), "the spool was not replayed after the store came back");
        var afterReturn = written.Sum() + 1000;
        Assert.True(await Some.EventuallyAsync(() => written.Sum() >= afterReturn || producers.All(p => p.IsCompleted), Generous));
        Volatile.Write(ref stop, 1);
        await Task.WhenAll(producers);
        await sink.FlushAsync(CancellationToken.None);
        Assert.True(await Some.EventuallyAsync(() => !sink.HasSpooledPoints, Generous), "the spool did not drain");
        await sink.FlushAsync(CancellationToken.None);
        output.WriteLine($"written per series {string.Join(",", written)}; health {sink.Health}");

        using var reader = new VmReader(vm.Url);
        var total = written.Sum();
        var exported = await reader.ExportWhenAsync($"{{__name__=\"sensor_raw\",run=\"{run}\"}}", s => s.Sum(x => x.Values.Length) >= total, Generous);
        foreach (var (key, k) in keys.Select((key, k) => (key, k)))
        {
            var s = exported.Single(e => e.Labels["silo"] == key.GetTag("silo"));
            Assert.Equal(Enumerable.Range(0, written[k]).Select(i => baseMs + (i * 10L)), s.Timestamps); // each once, none missing
            Assert.Equal(Enumerable.Range(0, written[k]).Select(i => (double)i), s.Values);
        }

        Assert.True(sink.Health.SpooledPoints > 0);
        Assert.Equal(0, sink.Health.DiscardedPoints);
    }

    [Fact]
    public async Task AWriterKilledWithItsSpoolFullReplaysEveryPointAfterARestart()
    {
        if (!VmEnvironment.Available(output, binary: true))
        {
            return;
        }

        var probe = SpoolProbe.Locate();
        var vm = VmServer.Create(VmEnvironment.Binary!, _dir.File("vm"), output);
        await using var _ = vm;
        var spool = _dir.File("spool");
        var run = Some.RunId();
        var baseMs = Some.RecentBaseMs();
        const int Count = 8000;

        // 1. The store is not running yet: the probe spools everything, says so, keeps appending, and is killed.
        using (var writer = SpoolProbe.Start(probe, "write", vm.Url, spool, run, Count.ToString(System.Globalization.CultureInfo.InvariantCulture), baseMs.ToString(System.Globalization.CultureInfo.InvariantCulture)))
        {
            var line = await writer.WaitForLineAsync("SPOOLED", Generous);
            output.WriteLine("probe: " + line);
            Assert.StartsWith($"SPOOLED {Count} reachable=False", line, StringComparison.Ordinal);
            await Task.Delay(300); // let it append tail points, so the kill may tear a write
            writer.Process.Kill(); // SIGKILL: no chance to flush or close anything
            await writer.Process.WaitForExitAsync();
        }

        Assert.NotEmpty(Directory.GetFiles(spool, "seg-*.lp"));

        // 2. The store comes up; a new process on the same spool replays it.
        await vm.StartAsync();
        using (var resumer = SpoolProbe.Start(probe, "resume", vm.Url, spool))
        {
            var line = await resumer.WaitForLineAsync("DRAINED", Generous);
            output.WriteLine("probe: " + line);
            await resumer.Process.WaitForExitAsync();
            Assert.Equal(0, resumer.Process.ExitCode);
        }

        using var reader = new VmReader(vm.Url);
        var exported = await reader.ExportWhenAsync(
            $"{{__name__=\"sensor_raw\",run=\"{run}\"}}",
            s => s.Where(x => x.Labels["sensor"] != "tail").Sum(x => x.Values.Length) >= Count,
            Generous);
        for (var k = 0; k < 4; k++)
        {
            var s = exported.Single(e => e.Labels["sensor"] == "LC" + k);
            var expected = Enumerable.Range(0, Count).Where(i => i % 4 == k).ToArray();
            Assert.Equal(expected.Select(i => baseMs + (i * 10L)), s.Timestamps);
            Assert.Equal(expected.Select(i => (double)i), s.Values);
        }

        // Tail points written after the last flush may be lost with the process, but those that arrived are whole and unique.
        var tail = exported.SingleOrDefault(e => e.Labels["sensor"] == "tail");
        if (tail is not null)
        {
            Assert.Equal(tail.Timestamps.Distinct().Count(), tail.Timestamps.Length);
            Assert.All(tail.Timestamps.Zip(tail.Values), p => Assert.Equal((p.First - baseMs) / 10.0, p.Second));
        }
    }
}

/// <summary>Runs tests/SiloWatch.Storage.SpoolProbe (built with this project) as a child process.</summary>
internal sealed class SpoolProbe : IDisposable
{
    private readonly List<string> _lines = [];
    private readonly SemaphoreSlim _lineArrived = new(0);

    private SpoolProbe(Process process) => Process = process;

    public Process Process { get; }

    public static string Locate()
    {
        // bin/<Configuration>/net10.0 of this project, mirrored in the probe's project folder.
        var here = new DirectoryInfo(AppContext.BaseDirectory.TrimEnd(Path.DirectorySeparatorChar));
        var framework = here.Name;
        var configuration = here.Parent!.Name;
        var testsFolder = here.Parent.Parent!.Parent!.Parent!.FullName;
        var dll = Path.Combine(testsFolder, "SiloWatch.Storage.SpoolProbe", "bin", configuration, framework, "SiloWatch.Storage.SpoolProbe.dll");
        Assert.True(File.Exists(dll), $"spool probe not built at {dll}");
        return dll;
    }

    public static SpoolProbe Start(string dll, params string[] args)
    {
        var dotnet = Environment.GetEnvironmentVariable("DOTNET_HOST_PATH") is { Length: > 0 } host ? host : "dotnet";
        var info = new ProcessStartInfo(dotnet) { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        info.ArgumentList.Add(dll);
        foreach (var a in args)
        {
            info.ArgumentList.Add(a);
        }

        var probe = new SpoolProbe(Process.Start(info)!);
        probe.Process.OutputDataReceived += (_, e) => probe.Add(e.Data);
        probe.Process.ErrorDataReceived += (_, e) => probe.Add(e.Data is null ? null : "stderr: " + e.Data);
        probe.Process.BeginOutputReadLine();
        probe.Process.BeginErrorReadLine();
        return probe;
    }

    public async Task<string> WaitForLineAsync(string prefix, TimeSpan timeout)
    {
        var until = DateTime.UtcNow + timeout;
        while (DateTime.UtcNow < until)
        {
            lock (_lines)
            {
                var hit = _lines.FirstOrDefault(l => l.StartsWith(prefix, StringComparison.Ordinal));
                if (hit is not null)
                {
                    return hit;
                }
            }

            if (Process.HasExited)
            {
                await Task.Delay(200); // let the last output lines arrive
                lock (_lines)
                {
                    var hit = _lines.FirstOrDefault(l => l.StartsWith(prefix, StringComparison.Ordinal));
                    Assert.True(hit is not null, $"probe exited ({Process.ExitCode}) without '{prefix}': {string.Join(" | ", _lines)}");
                    return hit;
                }
            }

            await _lineArrived.WaitAsync(TimeSpan.FromMilliseconds(200));
        }

        lock (_lines)
        {
            Assert.Fail($"probe printed no '{prefix}' in {timeout}: {string.Join(" | ", _lines)}");
            return "";
        }
    }

    public void Dispose()
    {
        if (!Process.HasExited)
        {
            Process.Kill();
        }

        Process.Dispose();
        _lineArrived.Dispose();
    }

    private void Add(string? line)
    {
        if (line is null)
        {
            return;
        }

        lock (_lines)
        {
            _lines.Add(line);
        }

        _lineArrived.Release();
    }
}
