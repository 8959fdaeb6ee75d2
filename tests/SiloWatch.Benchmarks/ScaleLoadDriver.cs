using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Sockets;
using System.Text;
using System.Text.Json;
using System.Text.Json.Nodes;
using Microsoft.Extensions.DependencyInjection;
using MQTTnet;
using MQTTnet.Protocol;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;
using SiloWatch.Simulator;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Load test of the whole service at plant scale: the demo plant copied to hundreds of silos (invented
/// ids, the same sensor layouts), a gateway publishing every silo's batch at a sustained rate through a
/// real Mosquitto on loopback into the service (in-process), and an observer of the published states (mosquitto_sub).
/// Each run is a fresh process; a run with few silos at the same load per silo is the memory baseline.
/// Usage: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- scale-load
///          [--silos 400] [--rate 20000] [--seconds 60] [--warmup 20] [--interval 00:00:01] [--baseline 4] [--min-evaluation 00:00:00.025]
///          [--store server|embedded]
/// The store is by default a time-series server (VictoriaMetrics on loopback, written through InfluxDB.Client, as a plant of
/// hundreds of silos would run it); "embedded" is the single-file store of the demo and of small plants.
/// </summary>
public static class ScaleLoadDriver
{
    private const string Prefix = "silowatch/v1";
    private const string ChildCommand = "scale-load-run";
    private static readonly string[] Templates = ["S1", "S2", "C1", "F1"];

    /// <summary>"scale-load [options]" runs the baseline and the scaled run, each in a fresh process ("scale-load-run [options]").</summary>
    public static Task<int> MainAsync(string[] args) => args[0] == ChildCommand ? RunOneAsync(args[1..]) : RunAsync(args[1..]);

    private static async Task<int> RunAsync(string[] args)
    {
        var settings = Settings.Parse(args);
        if (settings.Silos == settings.Baseline)
        {
            throw new ArgumentException("--silos must be more than --baseline: the memory per silo is the difference of the two runs");
        }

        Console.WriteLine($"scale-load: the demo plant copied to {settings.Silos} silos (S1, S2, C1, F1 in turn; invented ids), " +
            $"{settings.Rate:N0} samples/s offered, {settings.Seconds} s measured after {settings.Warmup} s warm-up, " +
            $"Instance:PublishInterval {settings.Interval}, Instance:MinEvaluationInterval {settings.MinEvaluation}, store: {settings.Store}, loopback only, {Environment.ProcessorCount} cores");
        var baseline = await RunChildAsync(settings with { Silos = settings.Baseline, Rate = settings.Rate * settings.Baseline / settings.Silos });
        var scaled = await RunChildAsync(settings);
        if (baseline is null || scaled is null)
        {
            return 1;
        }

        Console.WriteLine();
        Console.WriteLine("run       silos  offered/s  sustained/s  every msg→state  newest→state  evaluation→state  ingest wait  heap MB  working set MB        CPU %");
        Console.WriteLine("                                         p50 / p99 ms     p50 / p99 ms  p50 / p99 ms      mean ms              mean / peak / after GC");
        foreach (var (name, r) in new[] { ("baseline", baseline), ("scaled", scaled) })
        {
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{name,-9} {r.Silos,5}  {r.OfferedPerS,9:N0}  {r.SustainedPerS,11:N0}  {r.EveryP50Ms,6:F0} / {r.EveryP99Ms,-6:F0}  {r.NewestP50Ms,5:F0} / {r.NewestP99Ms,-5:F0}  {r.OutboundP50Ms,6:F1} / {r.OutboundP99Ms,-7:F1}  {r.IngestWaitMs,11:F1}  {r.HeapBytes / 1e6,7:F1}  {r.WorkingSetMeanBytes / 1e6,5:F1} / {r.WorkingSetPeakBytes / 1e6,5:F1} / {r.WorkingSetBytes / 1e6,5:F1}  {r.CpuPercent,5:F0}"));
        }

        var silos = scaled.Silos - baseline.Silos;
        double PerSilo(long scaledBytes, long baselineBytes) => (scaledBytes - baselineBytes) / (double)silos / 1024.0;
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"memory per silo (scaled − baseline) / {silos}: managed heap {PerSilo(scaled.HeapBytes, baseline.HeapBytes):F1} kB, " +
            $"working set mean {PerSilo(scaled.WorkingSetMeanBytes, baseline.WorkingSetMeanBytes):F1} kB (goal < 200 kB), peak {PerSilo(scaled.WorkingSetPeakBytes, baseline.WorkingSetPeakBytes):F1} kB, " +
            $"after a full collection {PerSilo(scaled.WorkingSetBytes, baseline.WorkingSetBytes):F1} kB"));
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"goal p99 < 100 ms at 20,000 samples/s: publish → first state including it p99 {scaled.EveryP99Ms:F0} ms at {scaled.SustainedPerS:N0} samples/s"));
        Console.WriteLine("every msg→state: from the publish of each telemetry message to the arrival of the first state that includes it (\"sampleTs\" at or after");
        Console.WriteLine("  the message's timestamp): the end-to-end latency, including the wait for the silo's next evaluation (up to Instance:MinEvaluationInterval).");
        Console.WriteLine("newest→state: the same for the newest message a state includes only (the freshness of what the operator sees).");
        Console.WriteLine("evaluation→state: from the state's evaluation (\"ts\") to its arrival: outbound queue, QoS 1 publish, broker, observer.");
        Console.WriteLine("ingest wait: samples published but not yet accepted, over the rate (Little's law): broker, receive, partition queue, decoding.");
        return 0;
    }

    /// <summary>One measured run in this process (started by <see cref="RunAsync"/> in a fresh process).</summary>
    private static async Task<int> RunOneAsync(string[] args)
    {
        var settings = Settings.Parse(args);
        var folder = Directory.CreateTempSubdirectory("silowatch-scale-").FullName;
        if (!OperatingSystem.IsWindows())
        {
            File.SetUnixFileMode(folder, (UnixFileMode)0x1FF); // mosquitto started as root runs as its own user
        }

        try
        {
            var result = await MeasureAsync(settings, folder);
            Console.WriteLine("RESULT " + JsonSerializer.Serialize(result));
            return 0;
        }
        finally
        {
            Directory.Delete(folder, recursive: true);
        }
    }

    private static async Task<RunResult?> RunChildAsync(Settings settings)
    {
        var self = Environment.ProcessPath!;
        var start = new ProcessStartInfo(self) { RedirectStandardOutput = true, UseShellExecute = false };
        if (Path.GetFileNameWithoutExtension(self) == "dotnet")
        {
            start.ArgumentList.Add(typeof(ScaleLoadDriver).Assembly.Location);
        }

        foreach (var arg in new[] { ChildCommand }.Concat(settings.ToArgs()))
        {
            start.ArgumentList.Add(arg);
        }

        using var child = Process.Start(start)!;
        RunResult? result = null;
        while (await child.StandardOutput.ReadLineAsync() is { } line)
        {
            if (line.StartsWith("RESULT ", StringComparison.Ordinal))
            {
                result = JsonSerializer.Deserialize<RunResult>(line["RESULT ".Length..]);
            }
            else
            {
                Console.WriteLine("  " + line);
            }
        }

        await child.WaitForExitAsync();
        if (child.ExitCode != 0 || result is null)
        {
            Console.WriteLine($"run with {settings.Silos} silos failed (exit {child.ExitCode})");
        }

        return result;
    }

    private static async Task<RunResult> MeasureAsync(Settings settings, string folder)
    {
        var root = ScenarioAccuracyDriver.FindRepositoryRoot();
        var (plantPath, silos) = WriteScaledPlant(root, folder, settings.Silos);
        // Every silo sends one batch of its sensors per period; the simulator's batches of one second tell their mean size.
        var perSecond = SimulatedTraces(root, folder, TimeSpan.FromSeconds(1));
        var samplesPerRound = silos.Sum(s => perSecond[s.Template].Average(m => m.Count));
        var messagesPerS = settings.Rate * silos.Length / samplesPerRound;
        var traces = SimulatedTraces(root, folder, TimeSpan.FromMilliseconds(Math.Round(silos.Length / messagesPerS * 1000)));
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"{silos.Length} silos, {samplesPerRound:F0} samples per round: one batch per silo every {silos.Length / messagesPerS * 1000:F0} ms, {messagesPerS:N0} messages/s"));

        using var broker = StartMosquitto(folder, out var port);
        Console.WriteLine($"mosquitto on 127.0.0.1:{port}");
        var storePort = 0;
        using var store = settings.Store == "server" ? StartVictoriaMetrics(folder, out storePort) : null;
        string[] storeArgs = store is null
            ? [$"--Storage:EmbeddedPath={Path.Combine(folder, "series.db")}"]
            : [$"--Storage:TimeSeries:Url=http://127.0.0.1:{storePort}"];
        Console.WriteLine(store is null ? "store: embedded file" : $"store: victoria-metrics on 127.0.0.1:{storePort}");
        var building = Stopwatch.StartNew();
        var app = SiloWatchApp.Build([
            "--Mqtt:Host=127.0.0.1", $"--Mqtt:Port={port}", "--Mqtt:ClientId=silowatch-scale", "--Instance:Id=scale-0",
            $"--Instance:PublishInterval={settings.Interval}", $"--Instance:MinEvaluationInterval={settings.MinEvaluation}", "--Instance:LogInterval=00:00:00", "--Demo:RunSimulator=false",
            "--Health:Urls=http://127.0.0.1:0", "--Serilog:MinimumLevel:Default=Warning",
            $"--Instance:PlantFile={plantPath}", $"--Instance:MaterialsFile={Path.Combine(root, "config", "materials.json")}",
            .. storeArgs, $"--Storage:JournalPath={Path.Combine(folder, "journal.db")}",
            $"--Storage:TimeSeries:SpoolDirectory={Path.Combine(folder, "spool")}"]);

        var ledger = new Ledger(silos.Length, (int)(messagesPerS * (settings.Seconds + settings.Warmup + 30)));
        var factory = new MqttClientFactory();
        using var gateway = factory.CreateMqttClient();
        long statesReceived = 0;
        var index = silos.Select((s, i) => (s.Key, i)).ToDictionary(x => x.Key, x => x.i, StringComparer.Ordinal);
        await gateway.ConnectAsync(new MqttClientOptionsBuilder().WithTcpServer("127.0.0.1", port).WithClientId("scale-gw").Build());

        // The observer is a process of its own (mosquitto_sub, stamping each arrival): inside this process,
        // beside the service, an MQTTnet observer fell seconds behind at 200 silos while mosquitto_sub kept up.
        using var observer = StartObserver(binaryBeside: broker.StartInfo.FileName, port);
        var observing = new Thread(() =>
        {
            while (observer.StandardOutput.ReadLine() is { } line)
            {
                // "<unix seconds with ns> <topic> <payload>"
                var first = line.IndexOf(' ', StringComparison.Ordinal);
                var second = first < 0 ? -1 : line.IndexOf(' ', first + 1);
                if (second < 0 || !double.TryParse(line.AsSpan(0, first), NumberStyles.Float, CultureInfo.InvariantCulture, out var arrivedS))
                {
                    continue;
                }

                Interlocked.Increment(ref statesReceived);
                var siloKey = line[(first + 1 + Prefix.Length + "/state/".Length)..second];
                var payload = new System.Buffers.ReadOnlySequence<byte>(Encoding.UTF8.GetBytes(line[(second + 1)..]));
                if (index.TryGetValue(siloKey, out var silo) && Times(payload) is ({ } evaluatedMs, { } sampleMs))
                {
                    ledger.StateArrived(silo, sampleMs, arrivedS * 1000, (arrivedS * 1000) - evaluatedMs);
                }
            }
        }) { IsBackground = true, Name = "state observer" };
        observing.Start();

        // The driver's own data is all allocated by now: what the heap gains from here is the service's.
        var built = building.Elapsed;
        var (heapBefore, workingSetBefore) = Memory();
        building.Restart();
        await app.StartAsync();
        var counters = app.Services.GetRequiredService<IngestCounters>();
        var ingest = app.Services.GetRequiredService<TelemetryIngest>();
        var bridge = app.Services.GetRequiredService<TelemetryBridgeService>();
        while (bridge.Client?.IsConnected != true)
        {
            await Task.Delay(50);
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"service built (plant loaded and checked, models) in {built.TotalSeconds:F1} s, started and connected in {building.Elapsed.TotalSeconds:F1} s"));

        using var stop = new CancellationTokenSource();
        var gatewayTask = Task.Run(() => PublishAsync(gateway, silos, traces, messagesPerS, ledger, stop.Token));
        await Task.Delay(TimeSpan.FromSeconds(settings.Warmup));

        ledger.Recording = true;
        var samples0 = counters.Samples;
        var published0 = ledger.SamplesPublished;
        var cpu0 = Process.GetCurrentProcess().TotalProcessorTime;
        var clock = Stopwatch.StartNew();
        var maxDepth = 0;
        var maxOutbound = 0;
        var outboundQueue = app.Services.GetRequiredService<OutboundQueue>();
        var states0 = Interlocked.Read(ref statesReceived);
        var backlog = new List<double>(settings.Seconds * 8);
        // The working set as the plant sees it: sampled through the measured window, where the collector leaves it
        // (the figure after the forced full collection below is what is left once the heap is compacted).
        long workingSetSum = 0, workingSetPeak = 0, workingSetSamples = 0;
        while (clock.Elapsed < TimeSpan.FromSeconds(settings.Seconds))
        {
            await Task.Delay(125);
            var workingSet = Environment.WorkingSet;
            workingSetSum += workingSet;
            workingSetSamples++;
            workingSetPeak = Math.Max(workingSetPeak, workingSet);
            maxDepth = Math.Max(maxDepth, ingest.Workers.Sum(w => w.Depth));
            maxOutbound = Math.Max(maxOutbound, outboundQueue.Count);
            var accepted = counters.Samples;
            backlog.Add(Math.Max(0, ledger.SamplesPublished - accepted - (published0 - samples0)));
        }

        var seconds = clock.Elapsed.TotalSeconds;
        var statesPerS = (Interlocked.Read(ref statesReceived) - states0) / seconds;
        var sustained = (counters.Samples - samples0) / seconds;
        var offered = (ledger.SamplesPublished - published0) / seconds;
        var cpu = (Process.GetCurrentProcess().TotalProcessorTime - cpu0).TotalSeconds / seconds / Environment.ProcessorCount * 100;
        ledger.Recording = false;
        var (newest, every, outbound) = ledger.Latencies();
        // Little's law: samples published but not yet accepted, over the rate, is the mean time a sample waits to be processed.
        var backlogMs = backlog.Count == 0 ? double.NaN : backlog.Average() / offered * 1000;

        // After warm-up and the measured window, while the load still runs: a full collection, then the sizes.
        var (heapAfter, workingSetAfter) = Memory();
        var gc = GC.GetGCMemoryInfo();
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"memory: managed heap {heapAfter / 1e6:F1} MB live, GC committed {gc.TotalCommittedBytes / 1e6:F1} MB; working set {workingSetAfter / 1e6:F1} MB ({ProcStatus("RssAnon")} anonymous, {ProcStatus("RssFile")} file-backed)"));
        await stop.CancelAsync();
        await gatewayTask;
        var snapshot = counters.Snapshot();
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"service: {snapshot.Samples:N0} samples accepted, {snapshot.Rejected} rejected, {snapshot.MissingMessages} messages missing, " +
            $"{snapshot.QueueFullWaits} queue-full waits, {snapshot.OutboundDropped} outbound dropped, {outboundQueue.Replaced:N0} waiting states replaced by newer ones, {snapshot.Published:N0} published; " +
            $"deepest partition queues {maxDepth}, outbound queue {maxOutbound}; {statesPerS:N0} states/s received, " +
            $"{newest.Length:N0} states and {every.Length:N0} messages matched; " +
            $"GC gen0/1/2 {GC.CollectionCount(0)}/{GC.CollectionCount(1)}/{GC.CollectionCount(2)}; " +
            $"workers waited for a checkpoint in flight {ingest.Workers.Sum(w => w.CheckpointWaits)} time(s), {ingest.Workers.Sum(w => w.CheckpointWaitTime.TotalMilliseconds):F0} ms in all"));
        var stopping = Stopwatch.StartNew();
        try
        {
            await app.StopAsync();
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"service stopped in {stopping.Elapsed.TotalSeconds:F1} s"));
        }
        catch (OperationCanceledException ex)
        {
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"service stop did not finish within the host's shutdown timeout ({stopping.Elapsed.TotalSeconds:F1} s): {ex.Message}"));
        }

        await app.DisposeAsync();
        await gateway.DisconnectAsync();
        observer.Kill();
        await observer.WaitForExitAsync();
        broker.Kill();
        await broker.WaitForExitAsync();
        if (store is not null)
        {
            store.Kill();
            await store.WaitForExitAsync();
        }

        return new RunResult(silos.Length, offered, sustained, Percentile(newest, 0.50), Percentile(newest, 0.99),
            Percentile(every, 0.50), Percentile(every, 0.99), Percentile(outbound, 0.50), Percentile(outbound, 0.99), backlogMs,
            heapAfter - heapBefore, workingSetAfter - workingSetBefore, cpu,
            (workingSetSum / Math.Max(1, workingSetSamples)) - workingSetBefore, workingSetPeak - workingSetBefore);
    }

    /// <summary>Publishes message j to silo j mod N at t0 + j/rate: every silo at its own even phase, as unsynchronised gateways would.</summary>
    private static async Task PublishAsync(IMqttClient gateway, ScaledSilo[] silos, Dictionary<string, List<byte[]>[]> traces,
        double messagesPerS, Ledger ledger, CancellationToken ct)
    {
        var clock = Stopwatch.StartNew();
        var inFlight = new Queue<Task<MqttClientPublishResult>>();
        long next = 0;
        var lastTs = new long[silos.Length];
        var seq = new long[silos.Length];
        while (!ct.IsCancellationRequested)
        {
            var due = (long)(clock.Elapsed.TotalSeconds * messagesPerS);
            for (; next < due; next++)
            {
                var s = (int)(next % silos.Length);
                var round = next / silos.Length;
                var silo = silos[s];
                var trace = traces[silo.Template];
                var samples = trace[(int)(round % trace.Length)];
                var ts = Math.Max(DateTimeOffset.UtcNow.ToUnixTimeMilliseconds(), lastTs[s] + 1);
                lastTs[s] = ts;
                var head = Encoding.UTF8.GetBytes(string.Create(CultureInfo.InvariantCulture, $"{{\"pub\":\"scale-gw\",\"seq\":{++seq[s]},\"ts\":{ts},\"samples\":"));
                var payload = new byte[head.Length + samples.Sum(x => x.Length) + samples.Count + 2]; // '[' ',' ... ']' '}'
                head.CopyTo(payload, 0);
                var at = head.Length;
                for (var k = 0; k < samples.Count; k++)
                {
                    payload[at++] = k == 0 ? (byte)'[' : (byte)',';
                    samples[k].CopyTo(payload, at);
                    at += samples[k].Length;
                }

                payload[at] = (byte)']';
                payload[at + 1] = (byte)'}';
                ledger.Published(s, ts, (DateTime.UtcNow - DateTime.UnixEpoch).TotalMilliseconds, samples.Count);
                inFlight.Enqueue(gateway.PublishAsync(new MqttApplicationMessageBuilder().WithTopic(silo.Topic).WithPayload(payload)
                    .WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce).Build(), CancellationToken.None));
                while (inFlight.Count > 0 && (inFlight.Count > 2000 || inFlight.Peek().IsCompleted))
                {
                    await inFlight.Dequeue();
                }
            }

            try
            {
                await Task.Delay(1, ct);
            }
            catch (OperationCanceledException)
            {
                break;
            }
        }

        await Task.WhenAll(inFlight);
    }

    /// <summary>The state's evaluation time ("ts") and the newest sample it includes ("sampleTs"), in Unix ms.</summary>
    private static (long? EvaluatedMs, long? SampleMs) Times(System.Buffers.ReadOnlySequence<byte> payload)
    {
        var reader = new Utf8JsonReader(payload);
        long? evaluated = null;
        while (reader.Read())
        {
            if (reader.TokenType != JsonTokenType.PropertyName || reader.CurrentDepth != 1)
            {
                continue;
            }

            var isTs = reader.ValueTextEquals("ts"u8);
            var isSample = reader.ValueTextEquals("sampleTs"u8);
            reader.Read();
            if (reader.TokenType != JsonTokenType.String)
            {
                continue;
            }

            if (isTs)
            {
                evaluated = reader.GetDateTimeOffset().ToUnixTimeMilliseconds();
            }
            else if (isSample)
            {
                return (evaluated, reader.GetDateTimeOffset().ToUnixTimeMilliseconds());
            }
        }

        return (evaluated, null);
    }

    /// <summary>Sensor values of the four demo silos from the plant simulator (the quiet first minutes of normal-day): one list of JSON samples per step.</summary>
    private static Dictionary<string, List<byte[]>[]> SimulatedTraces(string root, string folder, TimeSpan period)
    {
        const int Steps = 600;
        // normal-day is quiet for its first hours; its sample period is set to the load's so that values change at their own pace.
        var options = new JsonDocumentOptions { CommentHandling = JsonCommentHandling.Skip, AllowTrailingCommas = true };
        var scenario = JsonNode.Parse(File.ReadAllText(Path.Combine(root, "simulators", "scenarios", "normal-day.json")), documentOptions: options)!;
        scenario["SamplePeriod"] = period.ToString("c", CultureInfo.InvariantCulture);
        scenario["Network"] = new JsonObject { ["DuplicateProbability"] = 0, ["ReorderProbability"] = 0 };
        var scenarioPath = Path.Combine(folder, "scenario.json");
        File.WriteAllText(scenarioPath, scenario.ToJsonString());
        var model = SimulatorRunner.CreateModel(new SimulatorRunOptions
        {
            PlantPath = Path.Combine(root, "config", "plant.demo.json"),
            MaterialsPath = Path.Combine(root, "config", "materials.json"),
            ScenarioPath = scenarioPath,
            Speed = 1000,
            Seed = 11,
        }, DateTimeOffset.UtcNow);
        var lists = Templates.ToDictionary(t => t, _ => new List<List<byte[]>>(), StringComparer.Ordinal);
        foreach (var tick in model.Run().Take(Steps))
        {
            foreach (var outgoing in tick.Messages.Where(m => !m.IsDuplicate))
            {
                lists[outgoing.Message.Silo].Add([.. outgoing.Message.Samples.Select(s =>
                    Encoding.UTF8.GetBytes(string.Create(CultureInfo.InvariantCulture, $"{{\"sensor\":\"{s.Sensor}\",\"value\":{s.Value:R},\"unit\":\"{s.Unit}\"}}")))]);
            }
        }

        return lists.ToDictionary(l => l.Key, l => l.Value.ToArray(), StringComparer.Ordinal);
    }

    /// <summary>
    /// The demo plant with its four silos copied round-robin up to <paramref name="count"/>, 100 silos per
    /// invented site "load-00", "load-01" ..., silo ids "S1-000", "S2-000", "C1-000", "F1-000", "S1-001" ...
    /// </summary>
    internal static (string Path, ScaledSilo[] Silos) WriteScaledPlant(string root, string folder, int count)
    {
        var options = new JsonDocumentOptions { CommentHandling = JsonCommentHandling.Skip, AllowTrailingCommas = true };
        var demo = JsonNode.Parse(File.ReadAllText(Path.Combine(root, "config", "plant.demo.json")), documentOptions: options)!;
        var site = demo["Plant"]!["Sites"]![0]!;
        var templates = site["Silos"]!.AsArray().ToDictionary(s => (string)s!["Id"]!, s => s!, StringComparer.Ordinal);
        var sites = new JsonArray();
        var silos = new List<ScaledSilo>();
        for (var i = 0; i < count; i++)
        {
            var siteId = $"load-{i / 100:D2}";
            if (i % 100 == 0)
            {
                sites.Add(new JsonObject { ["Id"] = siteId, ["Name"] = $"Load-test site {i / 100} (generated)", ["TimeZone"] = (string?)site["TimeZone"], ["Silos"] = new JsonArray() });
            }

            var template = Templates[i % Templates.Length];
            var copy = templates[template].DeepClone();
            var siloId = $"{template}-{i / Templates.Length:D3}";
            copy["Id"] = siloId;
            copy["Name"] = $"{(string?)copy["Name"]} (load copy {i / Templates.Length})";
            sites[^1]!["Silos"]!.AsArray().Add(copy);
            silos.Add(new ScaledSilo($"{siteId}/{siloId}", template, $"{Prefix}/telemetry/{siteId}/{siloId}"));
        }

        var path = Path.Combine(folder, "plant.scaled.json");
        File.WriteAllText(path, new JsonObject { ["Plant"] = new JsonObject { ["Sites"] = sites } }.ToJsonString());
        return (path, [.. silos]);
    }

    private static Process StartMosquitto(string folder, out int port)
    {
        var binary = LocalServers.Mosquitto();
        port = LocalServers.FreeLoopbackPort();

        // The throughput settings of deploy/mosquitto/silowatch.conf, anonymous on loopback.
        var conf = Path.Combine(folder, "mosquitto.conf");
        File.WriteAllText(conf, $"listener {port} 127.0.0.1\nallow_anonymous true\nset_tcp_nodelay true\nmax_queued_messages 1000000\nmax_inflight_messages 0\n");
        var process = Process.Start(new ProcessStartInfo(binary, ["-c", conf]) { RedirectStandardError = true })!;
        for (var i = 0; i < 100; i++)
        {
            try
            {
                using var probe = new TcpClient();
                probe.Connect(IPAddress.Loopback, port);
                return process;
            }
            catch (SocketException)
            {
                Thread.Sleep(50);
            }
        }

        process.Kill();
        throw new InvalidOperationException("mosquitto did not start: " + process.StandardError.ReadToEnd());
    }

    /// <summary>VictoriaMetrics on a free loopback port with its data in <paramref name="folder"/> (the settings of tests/run.sh).</summary>
    private static Process StartVictoriaMetrics(string folder, out int port)
    {
        var binary = LocalServers.Installed("SILOWATCH_TEST_VM_BIN", ["/usr/bin/victoria-metrics", "/usr/local/bin/victoria-metrics"], "victoria-metrics is not installed (apt-get install victoria-metrics), or use --store embedded");
        port = LocalServers.FreeLoopbackPort();

        var process = Process.Start(new ProcessStartInfo(binary,
            [$"-httpListenAddr=127.0.0.1:{port}", $"-storageDataPath={Path.Combine(folder, "vm")}", "-dedup.minScrapeInterval=1ms", "-loggerLevel=ERROR"])
        {
            RedirectStandardError = true,
            RedirectStandardOutput = true,
        })!;
        using var http = new HttpClient { Timeout = TimeSpan.FromSeconds(1) };
        for (var i = 0; i < 100; i++)
        {
            try
            {
                if (http.GetAsync(new Uri($"http://127.0.0.1:{port}/health")).GetAwaiter().GetResult().IsSuccessStatusCode)
                {
                    return process;
                }
            }
            catch (Exception ex) when (ex is HttpRequestException or TaskCanceledException)
            {
            }

            Thread.Sleep(100);
        }

        process.Kill();
        throw new InvalidOperationException("victoria-metrics did not start");
    }

    private static Process StartObserver(string binaryBeside, int port)
    {
        var client = new[] { Path.Combine(Path.GetDirectoryName(binaryBeside) ?? "", "mosquitto_sub"), "/usr/bin/mosquitto_sub" }.FirstOrDefault(File.Exists)
            ?? throw new InvalidOperationException("mosquitto_sub is not installed (apt-get install mosquitto-clients)");
        var observer = Process.Start(new ProcessStartInfo(client,
            ["-h", "127.0.0.1", "-p", port.ToString(CultureInfo.InvariantCulture), "-i", "scale-observer", "-q", "0", "-t", Prefix + "/state/#", "-F", "%U %t %p"])
        {
            RedirectStandardOutput = true,
            UseShellExecute = false,
        })!;
        Thread.Sleep(300); // subscribed before the service publishes its first states
        return observer;
    }

    /// <summary>A line of /proc/self/status (Linux), e.g. "RssAnon" → "98304 kB"; "?" elsewhere.</summary>
    private static string ProcStatus(string key) =>
        File.Exists("/proc/self/status")
            ? File.ReadLines("/proc/self/status").FirstOrDefault(l => l.StartsWith(key + ":", StringComparison.Ordinal))?[(key.Length + 1)..].Trim() ?? "?"
            : "?";

    private static (long Heap, long WorkingSet) Memory()
    {
        var heap = GC.GetTotalMemory(forceFullCollection: true);
        using var self = Process.GetCurrentProcess();
        return (heap, self.WorkingSet64);
    }

    private static double Percentile(double[] sorted, double p) =>
        sorted.Length == 0 ? double.NaN : sorted[Math.Clamp((int)Math.Ceiling(p * sorted.Length) - 1, 0, sorted.Length - 1)];

    internal sealed record ScaledSilo(string Key, string Template, string Topic);

    public sealed record RunResult(int Silos, double OfferedPerS, double SustainedPerS, double NewestP50Ms, double NewestP99Ms,
        double EveryP50Ms, double EveryP99Ms, double OutboundP50Ms, double OutboundP99Ms, double IngestWaitMs,
        long HeapBytes, long WorkingSetBytes, double CpuPercent, long WorkingSetMeanBytes, long WorkingSetPeakBytes);

    private sealed record Settings(int Silos, double Rate, int Seconds, int Warmup, TimeSpan Interval, int Baseline, TimeSpan MinEvaluation, string Store)
    {
        public static Settings Parse(string[] args)
        {
            var s = new Settings(400, 20_000, 60, 20, TimeSpan.FromSeconds(1), 4, new InstanceOptions().MinEvaluationInterval, "server");
            for (var i = 0; i + 1 < args.Length; i += 2)
            {
                var v = args[i + 1];
                s = args[i] switch
                {
                    "--silos" => s with { Silos = int.Parse(v, CultureInfo.InvariantCulture) },
                    "--rate" => s with { Rate = double.Parse(v, CultureInfo.InvariantCulture) },
                    "--seconds" => s with { Seconds = int.Parse(v, CultureInfo.InvariantCulture) },
                    "--warmup" => s with { Warmup = int.Parse(v, CultureInfo.InvariantCulture) },
                    "--interval" => s with { Interval = TimeSpan.Parse(v, CultureInfo.InvariantCulture) },
                    "--baseline" => s with { Baseline = int.Parse(v, CultureInfo.InvariantCulture) },
                    "--min-evaluation" => s with { MinEvaluation = TimeSpan.Parse(v, CultureInfo.InvariantCulture) },
                    "--store" => v is "server" or "embedded" ? s with { Store = v } : throw new ArgumentException($"--store takes server or embedded, not '{v}'"),
                    _ => throw new ArgumentException($"unknown option {args[i]}"),
                };
            }

            return s.Silos >= s.Baseline && s.Baseline >= 1 && s.Rate > 0 && s.Seconds > 0 && s.Interval > TimeSpan.Zero
                ? s
                : throw new ArgumentException("need --silos >= --baseline >= 1, --rate > 0, --seconds > 0, --interval > 0");
        }

        public string[] ToArgs() =>
        [
            "--silos", Silos.ToString(CultureInfo.InvariantCulture), "--rate", Rate.ToString("R", CultureInfo.InvariantCulture),
            "--seconds", Seconds.ToString(CultureInfo.InvariantCulture), "--warmup", Warmup.ToString(CultureInfo.InvariantCulture),
            "--interval", Interval.ToString("c", CultureInfo.InvariantCulture), "--baseline", Baseline.ToString(CultureInfo.InvariantCulture),
            "--min-evaluation", MinEvaluation.ToString("c", CultureInfo.InvariantCulture), "--store", Store,
        ];
    }

    /// <summary>
    /// Per silo, the telemetry messages published and not yet seen in a state (sample timestamp, publish
    /// time), and the latencies recorded while <see cref="Recording"/>. Preallocated before the service starts.
    /// </summary>
    private sealed class Ledger
    {
        private const int PerSilo = 256;
        private readonly long[][] _ts;
        private readonly double[][] _at;
        private readonly int[] _head;
        private readonly int[] _tail;
        private readonly double[] _newest;
        private readonly double[] _every;
        private readonly double[] _outbound;
        private readonly Lock _gate = new();
        private int _newestCount;
        private int _everyCount;
        private long _samplesPublished;

        public Ledger(int silos, int capacity)
        {
            _ts = [.. Enumerable.Range(0, silos).Select(_ => new long[PerSilo])];
            _at = [.. Enumerable.Range(0, silos).Select(_ => new double[PerSilo])];
            _head = new int[silos];
            _tail = new int[silos];
            _newest = new double[capacity];
            _every = new double[capacity];
            _outbound = new double[capacity];
        }

        public volatile bool Recording;

        public long SamplesPublished => Interlocked.Read(ref _samplesPublished);

        public void Published(int silo, long tsMs, double atUnixMs, int samples)
        {
            Interlocked.Add(ref _samplesPublished, samples);
            lock (_gate)
            {
                var tail = _tail[silo];
                if (tail - _head[silo] == PerSilo)
                {
                    _head[silo]++; // never matched (the service is far behind): forget the oldest
                }

                _ts[silo][tail % PerSilo] = tsMs;
                _at[silo][tail % PerSilo] = atUnixMs;
                _tail[silo] = tail + 1;
            }
        }

        /// <summary>A state of <paramref name="silo"/> that includes samples up to <paramref name="sampleMs"/> arrived.</summary>
        public void StateArrived(int silo, long sampleMs, double arrivedUnixMs, double sinceEvaluationMs)
        {
            lock (_gate)
            {
                var matched = false;
                var last = 0.0;
                while (_head[silo] < _tail[silo] && _ts[silo][_head[silo] % PerSilo] <= sampleMs)
                {
                    last = arrivedUnixMs - _at[silo][_head[silo] % PerSilo];
                    if (Recording && _everyCount < _every.Length)
                    {
                        _every[_everyCount++] = last;
                    }

                    matched = true;
                    _head[silo]++;
                }

                if (matched && Recording && _newestCount < _newest.Length)
                {
                    _outbound[_newestCount] = sinceEvaluationMs;
                    _newest[_newestCount++] = last;
                }
            }
        }

        /// <summary>Sorted: newest sample → state, every message → first state, evaluation → state arrival (outbound).</summary>
        public (double[] Newest, double[] Every, double[] Outbound) Latencies()
        {
            lock (_gate)
            {
                var newest = _newest[.._newestCount];
                var every = _every[.._everyCount];
                var outbound = _outbound[.._newestCount];
                Array.Sort(newest);
                Array.Sort(every);
                Array.Sort(outbound);
                return (newest, every, outbound);
            }
        }
    }
}
