using System.Collections.Concurrent;
using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Sockets;
using System.Text;
using System.Text.Json;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Service.Hosting;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// Two service processes with different shards against one Mosquitto and one VictoriaMetrics; a
/// gateway publishes a numbered stream to every silo; one instance is killed with SIGKILL in the
/// middle and started again. Every silo must be handled by exactly one instance, and the store must
/// hold, for every load cell and second, the mean of exactly the samples published for it: a lost
/// sample or one counted twice moves that mean.
/// </summary>
public sealed class ShardedInstancesTests
{
    private const string Site = "brackenford";
    private const int Messages = 300;          // per silo, numbered 1..Messages
    private const int MessageStepMs = 100;     // sample time between two messages of a silo: 10 per 1 s interval
    // Messages per silo published before the kill: the last of a second. The gateway then pauses for
    // seconds while the victim restarts, and the other instance writes its idle silos' open second; were
    // that second partly sent, its completion would be written again with the same timestamp, and
    // VictoriaMetrics keeps either of two writes of a timestamp (not reliably the newer).
    private const int KillAfter = 129;

    // Load cells of the demo plant (config/plant.demo.json), mV/V, physical range -0.5..3.2.
    private static readonly Dictionary<string, string[]> Cells = new(StringComparer.Ordinal)
    {
        ["S1"] = ["LC1", "LC2", "LC3", "LC4"],
        ["S2"] = ["LC1"],
        ["C1"] = ["LC1", "LC2", "LC3"],
        ["F1"] = ["LC1", "LC2", "LC3", "LC4"],
    };

    [Fact]
    public async Task AKilledShardResumesFromItsCheckpointWithNoSampleLostAndNoneCountedTwice()
    {
        if (TestStore.UrlOrNull() is not { } vm)
        {
            return;
        }

        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        using var http = new HttpClient { BaseAddress = new Uri(vm), Timeout = TimeSpan.FromSeconds(30) };
        await AssertStoreKeepsOnePointPerSeriesAndTimestampAsync(http);

        // A second of 2025 no other test writes to (any age is accepted: Decoder:MaxLateness 0).
        var run = Guid.NewGuid().ToString("N")[..6];
        var baseMs = new DateTimeOffset(2025, 1, 1, 0, 0, 0, TimeSpan.Zero).ToUnixTimeMilliseconds()
            + (long)Random.Shared.Next(0, 360 * 24 * 3600) * 1000;
        var root = Directory.CreateTempSubdirectory("silowatch-shards-").FullName;
        var owner = Cells.Keys.ToDictionary(s => s, s => ShardMap.ShardOf($"{Site}/{s}", 2), StringComparer.Ordinal);
        Assert.True(owner.Values.Distinct().Count() == 2, "the demo plant's silos must fall on both shards");
        var victim = owner["S1"];

        await using var observer = await TestMqtt.ConnectAsync(broker.Port, "observer-" + run, "silowatch/v1/state/#");
        var instances = new[] { new Instance(0, run, root, broker.Port, vm), new Instance(1, run, root, broker.Port, vm) };
        try
        {
            foreach (var instance in instances)
            {
                instance.Start();
            }

            foreach (var instance in instances)
            {
                await instance.WaitUntilConnectedAsync(http);
            }

            await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-" + run);
            for (var seq = 1; seq <= Messages; seq++)
            {
                foreach (var (silo, cells) in Cells)
                {
                    await gateway.PublishBatchAsync(Site, silo, DateTimeOffset.FromUnixTimeMilliseconds(TimestampOf(baseMs, seq)),
                        cells.Select((c, i) => (c, Value(seq, i), "mV/V")), seq);
                }

                if (seq == KillAfter)
                {
                    // Mid-stream, with messages processed but not yet covered by a checkpoint.
                    await TestMqtt.WaitForAsync(() => instances[victim].HasCheckpoint(http, "S1"), "a first checkpoint of S1");
                    instances[victim].Kill();
                    instances[victim].Start();
                    await instances[victim].WaitUntilConnectedAsync(http);
                }
                else if (seq % 20 == 0)
                {
                    await Task.Delay(20); // a gateway's pace, so the kill falls mid-stream
                }
            }

            // Every silo's owner has checkpointed the last message: nothing is left with the broker.
            foreach (var (silo, shard) in owner)
            {
                await TestMqtt.WaitForAsync(() => instances[shard].CheckpointedSeq(http, silo, gateway.Publisher) == Messages,
                    $"{silo}: message {Messages} checkpointed by instance {shard}", TimeSpan.FromSeconds(90));
            }

            Assert.Contains(instances[victim].Output, l => l.Contains($"Resumed {Site}/S1 from its checkpoint", StringComparison.Ordinal));
            foreach (var instance in instances)
            {
                await instance.StopAsync(); // graceful: the last open intervals are written
            }

            // Each silo handled by exactly one instance: only its owner has it, and only its owner published its state.
            foreach (var instance in instances)
            {
                Assert.Equal(owner.Where(o => o.Value == instance.Shard).Select(o => o.Key).Order(), instance.OwnedSilos.Order());
            }

            var publishers = observer.Received
                .Select(m => JsonDocument.Parse(m.Payload).RootElement)
                .Where(e => e.TryGetProperty("silo", out _))
                .GroupBy(e => e.GetProperty("silo").GetString()!)
                .ToDictionary(g => g.Key, g => g.Select(e => e.GetProperty("instance").GetString()).Distinct().ToList());
            foreach (var (silo, shard) in owner)
            {
                Assert.Equal([instances[shard].Id], publishers[silo]);
            }

            // The store: one point per load cell and second, holding the mean of exactly the samples sent for it.
            foreach (var (silo, cells) in Cells)
            {
                for (var i = 0; i < cells.Length; i++)
                {
                    var expected = ExpectedMeans(baseMs, i);
                    // The store makes a write searchable within about a second: poll until every published second is there.
                    var stored = await ExportAsync(http, silo, cells[i], baseMs, TimestampOf(baseMs, Messages) + 1000);
                    var deadline = DateTime.UtcNow.AddSeconds(30);
                    while (!expected.Keys.All(stored.ContainsKey) && DateTime.UtcNow < deadline)
                    {
                        await Task.Delay(250);
                        stored = await ExportAsync(http, silo, cells[i], baseMs, TimestampOf(baseMs, Messages) + 1000);
                    }

                    Assert.True(expected.Keys.SequenceEqual(stored.Keys),
                        $"{silo}/{cells[i]} (owner: instance {owner[silo]}): seconds missing from the store {string.Join(",", expected.Keys.Except(stored.Keys))}; " +
                        $"stored but never published {string.Join(",", stored.Keys.Except(expected.Keys))}");
                    foreach (var (ts, mean) in expected)
                    {
                        Assert.True(Math.Abs(stored[ts] - mean) < 1e-9,
                            $"{silo}/{cells[i]} at {ts}: stored mean {stored[ts]:R}, published {mean:R} (owner: instance {owner[silo]}{(owner[silo] == victim ? ", killed and restarted" : "")})");
                    }
                }
            }
        }
        finally
        {
            foreach (var instance in instances)
            {
                instance.Kill();
            }

            Directory.Delete(root, recursive: true);
        }
    }

    private static long TimestampOf(long baseMs, int seq) => baseMs + ((long)seq * MessageStepMs);

    // Distinct values, so that a sample missing from or added twice to a second changes its mean.
    private static double Value(int seq, int cell) => 0.5 + (0.0001 * ((seq * 7) + (cell * 13))) + (0.000001 * (seq % 17));

    private static SortedDictionary<long, double> ExpectedMeans(long baseMs, int cell)
    {
        var sums = new SortedDictionary<long, (double Sum, int Count)>();
        for (var seq = 1; seq <= Messages; seq++)
        {
            var second = TimestampOf(baseMs, seq) / 1000 * 1000;
            var (sum, count) = sums.GetValueOrDefault(second);
            sums[second] = (sum + Value(seq, cell), count + 1);
        }

        return new SortedDictionary<long, double>(sums.ToDictionary(s => s.Key, s => s.Value.Sum / s.Value.Count));
    }

    private static async Task<SortedDictionary<long, double>> ExportAsync(HttpClient http, string silo, string sensor, long fromMs, long toMs)
    {
        var query = $"/api/v1/export?match[]={Uri.EscapeDataString($"sensor_raw{{site=\"{Site}\",silo=\"{silo}\",sensor=\"{sensor}\"}}")}" +
                    $"&start={fromMs / 1000}&end={(toMs / 1000) + 1}";
        var result = new SortedDictionary<long, double>();
        var body = await http.GetStringAsync(query);
        foreach (var line in body.Split('\n', StringSplitOptions.RemoveEmptyEntries))
        {
            var root = JsonDocument.Parse(line).RootElement;
            var timestamps = root.GetProperty("timestamps").EnumerateArray().Select(t => t.GetInt64()).ToList();
            var values = root.GetProperty("values").EnumerateArray().Select(v => v.GetDouble()).ToList();
            for (var k = 0; k < timestamps.Count; k++)
            {
                Assert.False(result.ContainsKey(timestamps[k]), $"{silo}/{sensor}: two points at {timestamps[k]}");
                result[timestamps[k]] = values[k];
            }
        }

        return result;
    }

    /// <summary>
    /// A replay after a restart writes points the store may already hold; it must keep them once
    /// (VictoriaMetrics: -dedup.minScrapeInterval=1ms, as tests/run.sh starts it; InfluxDB does so by itself).
    /// </summary>
    private static async Task AssertStoreKeepsOnePointPerSeriesAndTimestampAsync(HttpClient http)
    {
        var metric = "silowatch_dedup_check_" + Guid.NewGuid().ToString("N")[..8];
        var ts = DateTimeOffset.UtcNow.AddMinutes(-5).ToUnixTimeMilliseconds();
        for (var i = 0; i < 2; i++)
        {
            using var content = new StringContent($"{metric},run=x f=1 {ts}", Encoding.UTF8);
            (await http.PostAsync("/api/v2/write?precision=ms", content)).EnsureSuccessStatusCode();
        }

        var samples = 0;
        var deadline = DateTime.UtcNow.AddSeconds(30);
        while (samples == 0 && DateTime.UtcNow < deadline)
        {
            var body = await http.GetStringAsync($"/api/v1/export?match[]={metric}_f");
            samples = body.Split('\n', StringSplitOptions.RemoveEmptyEntries)
                .Sum(l => JsonDocument.Parse(l).RootElement.GetProperty("values").GetArrayLength());
            if (samples == 0)
            {
                await Task.Delay(200);
            }
        }

        Assert.True(samples == 1, $"the store kept {samples} points for one series and timestamp written twice; start VictoriaMetrics with -dedup.minScrapeInterval=1ms");
    }

    /// <summary>One SiloWatch service process (the built SiloWatch.Service.dll), its data folder kept over restarts.</summary>
    private sealed class Instance(int shard, string run, string root, int brokerPort, string vm)
    {
        private readonly ConcurrentQueue<string> _output = new();
        private readonly string _data = Path.Combine(root, "shard-" + shard);
        private Process? _process;
        private int _httpPort;

        public int Shard { get; } = shard;

        public string Id { get; } = $"it-shard-{shard}-{run}";

        public IReadOnlyCollection<string> Output => _output;

        public List<string> OwnedSilos { get; } = [];

        public void Start()
        {
            Directory.CreateDirectory(_data);
            _httpPort = FreePort();
            var info = new ProcessStartInfo("dotnet") { WorkingDirectory = _data, RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
            info.ArgumentList.Add(ServiceDll());
            var config = Path.Combine(AppContext.BaseDirectory, "config");
            foreach (var arg in new[]
                     {
                         "--Mqtt:Host=127.0.0.1", $"--Mqtt:Port={brokerPort}", $"--Mqtt:ClientId=silowatch-{Id}",
                         $"--Instance:Id={Id}", $"--Instance:ShardIndex={Shard}", "--Instance:ShardCount=2",
                         "--Instance:PublishInterval=00:00:00.500", "--Instance:LogInterval=00:00:00",
                         $"--Instance:PlantFile={Path.Combine(config, "plant.demo.json")}", $"--Instance:MaterialsFile={Path.Combine(config, "materials.json")}",
                         "--Demo:RunSimulator=false", "--Decoder:MaxLateness=00:00:00",
                         $"--Health:Urls=http://127.0.0.1:{_httpPort}", "--StatusPage:Enabled=false",
                         $"--Storage:TimeSeries:Url={vm}", $"--Storage:TimeSeries:SpoolDirectory={Path.Combine(_data, "spool")}",
                         "--Storage:TimeSeries:FlushInterval=00:00:00.200",
                         $"--Storage:EmbeddedPath={Path.Combine(_data, "series.db")}", $"--Storage:JournalPath={Path.Combine(_data, "journal.db")}",
                         "--Serilog:MinimumLevel:Default=Information", "--Serilog:MinimumLevel:Override:Microsoft=Warning",
                     })
            {
                info.ArgumentList.Add(arg);
            }

            var process = Process.Start(info) ?? throw new InvalidOperationException("dotnet did not start");
            process.OutputDataReceived += (_, e) => Keep(e.Data);
            process.ErrorDataReceived += (_, e) => Keep(e.Data);
            process.BeginOutputReadLine();
            process.BeginErrorReadLine();
            _process = process;
        }

        public async Task WaitUntilConnectedAsync(HttpClient http)
        {
            await TestMqtt.WaitForAsync(() => Health(http) is { } h && h.GetProperty("broker").GetProperty("connected").GetBoolean(),
                $"instance {Shard} connected ({string.Join(" | ", _output.TakeLast(5))})", TimeSpan.FromSeconds(60));
            JsonElement? silos = null;
            await TestMqtt.WaitForAsync(() => (silos = Silos(http)) is not null, $"instance {Shard} lists its silos");
            OwnedSilos.Clear();
            OwnedSilos.AddRange(silos!.Value.EnumerateArray().Select(s => s.GetProperty("silo").GetString()!));
        }

        public bool HasCheckpoint(HttpClient http, string silo) => CheckpointedSeq(http, silo, null) > 0;

        /// <summary>The highest seq of <paramref name="publisher"/> (any publisher when null) in the silo's last checkpoint, 0 when none.</summary>
        public long CheckpointedSeq(HttpClient http, string silo, string? publisher)
        {
            var silos = Silos(http);
            if (silos is null)
            {
                return 0;
            }

            foreach (var s in silos.Value.EnumerateArray())
            {
                if (s.GetProperty("silo").GetString() == silo && s.GetProperty("checkpoint") is { ValueKind: JsonValueKind.Object } checkpoint)
                {
                    return checkpoint.GetProperty("publishers").EnumerateArray()
                        .Where(p => publisher is null || p.GetProperty("publisher").GetString() == publisher)
                        .Select(p => p.GetProperty("highestSeq").GetInt64())
                        .DefaultIfEmpty(0).Max();
                }
            }

            return 0;
        }

        public void Kill()
        {
            if (_process is { HasExited: false } process)
            {
                process.Kill(); // SIGKILL: no drain, no flush, no goodbye to the broker
                process.WaitForExit(10_000);
            }

            _process?.Dispose();
            _process = null;
        }

        /// <summary>SIGTERM: the host drains, checkpoints, flushes and disconnects.</summary>
        public async Task StopAsync()
        {
            if (_process is not { HasExited: false } process)
            {
                return;
            }

            using (var kill = Process.Start("kill", ["-TERM", process.Id.ToString(CultureInfo.InvariantCulture)]))
            {
                await kill.WaitForExitAsync();
            }

            using var timeout = new CancellationTokenSource(TimeSpan.FromSeconds(60));
            await process.WaitForExitAsync(timeout.Token);
            Assert.True(process.ExitCode == 0, $"instance {Shard} exited with {process.ExitCode}: {string.Join(" | ", _output.TakeLast(10))}");
        }

        private JsonElement? Health(HttpClient http) => GetJson(http, "/health");

        private JsonElement? Silos(HttpClient http) => GetJson(http, "/api/silos");

        private JsonElement? GetJson(HttpClient http, string path)
        {
            if (_process is null or { HasExited: true })
            {
                return null;
            }

            try
            {
                using var request = new HttpRequestMessage(HttpMethod.Get, $"http://127.0.0.1:{_httpPort}{path}");
                using var response = http.Send(request);
                using var stream = response.Content.ReadAsStream();
                return JsonDocument.Parse(stream).RootElement.Clone();
            }
            catch (Exception ex) when (ex is HttpRequestException or JsonException or TaskCanceledException or IOException)
            {
                return null; // not listening yet
            }
        }

        private void Keep(string? line)
        {
            if (line is null)
            {
                return;
            }

            _output.Enqueue(line);
            while (_output.Count > 2000 && _output.TryDequeue(out _))
            {
            }
        }

        private static string ServiceDll()
        {
            // tests/SiloWatch.Integration.Tests/bin/<Configuration>/<framework>/ → src/SiloWatch.Service/bin/<Configuration>/<framework>/
            var here = new DirectoryInfo(AppContext.BaseDirectory.TrimEnd(Path.DirectorySeparatorChar));
            var framework = here.Name;
            var configuration = here.Parent!.Name;
            var repo = here.Parent!.Parent!.Parent!.Parent!.Parent!.FullName;
            var dll = Path.Combine(repo, "src", "SiloWatch.Service", "bin", configuration, framework, "SiloWatch.Service.dll");
            Assert.True(File.Exists(dll), $"the service is not built at {dll}");
            return dll;
        }

        private static int FreePort()
        {
            using var listener = new TcpListener(IPAddress.Loopback, 0);
            listener.Start();
            return ((IPEndPoint)listener.LocalEndpoint).Port;
        }
    }
}
