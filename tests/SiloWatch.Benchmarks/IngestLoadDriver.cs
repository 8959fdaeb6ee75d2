using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Sockets;
using System.Text;
using MQTTnet;
using MQTTnet.Protocol;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;
using Microsoft.Extensions.DependencyInjection;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Load driver: telemetry through a real Mosquitto, consumed once by a bare MQTTnet subscriber and
/// once by the SiloWatch service, in the same run; prints both rates and their ratio.
/// Usage: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- ingest-load [messages] [samplesPerMessage] [rounds] [warmupRounds]
/// The first rounds of a process run on code the JIT has not optimised yet (tiered compilation
/// promotes hot methods after a few seconds): they are run and printed as warm-up (3 by default) and
/// left out of the summary, which is about the service in steady state. On a shared machine the two take turns going first, and each phase records how busy other
/// processes kept the cores, so that the rounds nobody disturbed can be told apart.
/// </summary>
public static class IngestLoadDriver
{
    private static readonly string[] Sensors = ["LC1", "LC2", "LC3", "LC4", "T-R1-000"];

    public static async Task<int> RunAsync(string[] args)
    {
        var messages = args.Length > 0 ? int.Parse(args[0], CultureInfo.InvariantCulture) : 50_000;
        var perMessage = args.Length > 1 ? int.Parse(args[1], CultureInfo.InvariantCulture) : 50;
        var rounds = args.Length > 2 ? int.Parse(args[2], CultureInfo.InvariantCulture) : 3;
        var warmups = args.Length > 3 ? int.Parse(args[3], CultureInfo.InvariantCulture) : 3;
        ArgumentOutOfRangeException.ThrowIfNegative(warmups, "warmupRounds");
        var mosquitto = LocalServers.Mosquitto();
        var folder = Directory.CreateTempSubdirectory("silowatch-load-").FullName;
        if (!OperatingSystem.IsWindows())
        {
            File.SetUnixFileMode(folder, (UnixFileMode)0x1FF);
        }
        var port = LocalServers.FreeLoopbackPort();
        var conf = Path.Combine(folder, "mosquitto.conf");
        await File.WriteAllTextAsync(conf, $"listener {port} 127.0.0.1\nallow_anonymous true\nset_tcp_nodelay true\nmax_queued_messages 0\nmax_inflight_messages 0\n");
        using var broker = Process.Start(new ProcessStartInfo(mosquitto, ["-c", conf]) { RedirectStandardError = true })!;
        await Task.Delay(500);
        try
        {
            var payloads = BuildPayloads(messages, perMessage);
            Console.WriteLine($"{messages} messages of {perMessage} samples (~{payloads[0].Length} bytes) through mosquitto on 127.0.0.1:{port}, QoS 1, " +
                $"{warmups} warm-up round(s) then {rounds} measured round(s), bare subscriber and service in turn (the first of each round alternates); {Environment.ProcessorCount} cores, load average {LoadAverage()}");
            Console.WriteLine("cpu: microseconds of CPU per message while streaming, in this process (publisher + consumer) and in mosquitto; " +
                "others: cores busy with other processes during the phase (from /proc/stat)");
            var bares = new List<Phase>();
            var services = new List<Phase>();
            for (var round = 1 - warmups; round <= rounds; round++)
            {
                var warmup = round <= 0;
                Phase bare, service;
                if ((round & 1) == 1)
                {
                    Settle();
                    bare = await MeasureBareAsync(port, payloads, round, new Meter(broker));
                    Settle();
                    service = await MeasureServiceAsync(port, payloads, perMessage, folder, round, new Meter(broker));
                }
                else
                {
                    Settle();
                    service = await MeasureServiceAsync(port, payloads, perMessage, folder, round, new Meter(broker));
                    Settle();
                    bare = await MeasureBareAsync(port, payloads, round, new Meter(broker));
                }

                if (!warmup)
                {
                    bares.Add(bare);
                    services.Add(service);
                }

                Console.WriteLine($"{(warmup ? $"warm-up {round + warmups}" : $"round {round}")}: bare {bare.Rate,8:N0} msg/s (cpu {bare.OwnCpuUs(messages),5:F1} us, mosquitto {bare.BrokerCpuUs(messages),5:F1} us, others {bare.OtherCores,4:F2}) | " +
                    $"service {service.Rate,8:N0} msg/s = {service.Rate * perMessage,9:N0} samples/s (cpu {service.OwnCpuUs(messages),5:F1} us, mosquitto {service.BrokerCpuUs(messages),5:F1} us, others {service.OtherCores,4:F2}) | " +
                    $"ratio {service.Rate / bare.Rate:P1}");
                Console.WriteLine($"         bare {bare.Gc(messages)} | service {service.Gc(messages)}");
            }

            Summarise(bares, services, messages);
            Console.WriteLine($"load average now {LoadAverage()}");
            return 0;
        }
        finally
        {
            broker.Kill();
            Directory.Delete(folder, recursive: true);
        }
    }

    /// <summary>
    /// Medians and bests of both consumers, the ratio per round, and the ratio over the quiet rounds:
    /// those in which other processes kept less than <see cref="QuietCores"/> of a core busy in both phases.
    /// </summary>
    private static void Summarise(List<Phase> bares, List<Phase> services, int messages)
    {
        static double Median(IEnumerable<double> values)
        {
            var sorted = values.Order().ToArray();
            return sorted.Length % 2 == 1 ? sorted[sorted.Length / 2] : 0.5 * (sorted[(sorted.Length / 2) - 1] + sorted[sorted.Length / 2]);
        }

        var ratios = bares.Zip(services, (b, s) => s.Rate / b.Rate).ToArray();
        Console.WriteLine($"bare:    median {Median(bares.Select(p => p.Rate)),8:N0} msg/s, best {bares.Max(p => p.Rate),8:N0} msg/s; " +
            $"own cpu median {Median(bares.Select(p => p.OwnCpuUs(messages))):F1} us/msg");
        Console.WriteLine($"service: median {Median(services.Select(p => p.Rate)),8:N0} msg/s, best {services.Max(p => p.Rate),8:N0} msg/s; " +
            $"own cpu median {Median(services.Select(p => p.OwnCpuUs(messages))):F1} us/msg " +
            $"(the service adds {Median(services.Select(p => p.OwnCpuUs(messages))) - Median(bares.Select(p => p.OwnCpuUs(messages))):F1} us of CPU per message)");
        Console.WriteLine($"ratio service/bare: median {Median(ratios):P1}, range {ratios.Min():P1} .. {ratios.Max():P1} over {ratios.Length} round(s); " +
            $"best service / best bare {services.Max(p => p.Rate) / bares.Max(p => p.Rate):P1}");
        var quiet = Enumerable.Range(0, ratios.Length).Where(i => bares[i].OtherCores < QuietCores && services[i].OtherCores < QuietCores).ToArray();
        Console.WriteLine(quiet.Length == 0
            ? $"quiet rounds (others below {QuietCores:F2} cores in both phases): none"
            : $"quiet rounds (others below {QuietCores:F2} cores in both phases): {quiet.Length}, ratio median {Median(quiet.Select(i => ratios[i])):P1}, " +
              $"range {quiet.Min(i => ratios[i]):P1} .. {quiet.Max(i => ratios[i]):P1}");
    }

    private const double QuietCores = 0.25;

    private sealed record Phase(double Rate, TimeSpan OwnCpu, TimeSpan BrokerCpu, long AllocatedBytes, int Gen0, int Gen2, TimeSpan GcPause, double OtherCores)
    {
        public string Gc(int messages) => string.Create(CultureInfo.InvariantCulture,
            $"alloc {AllocatedBytes / (double)messages,6:N0} B/msg, gc0 {Gen0,3} gc2 {Gen2,2}, pause {GcPause.TotalMilliseconds,5:N0} ms");

        public double OwnCpuUs(int messages) => OwnCpu.TotalMicroseconds / messages;

        public double BrokerCpuUs(int messages) => BrokerCpu.TotalMicroseconds / messages;
    }

    /// <summary>CPU and GC counters from the start of publishing to the last message consumed.</summary>
    private sealed class Meter(Process broker)
    {
        private long _started;
        private double _busy;
        private TimeSpan _own;
        private TimeSpan _broker;
        private long _allocated;
        private int _gen0;
        private int _gen2;
        private TimeSpan _pause;

        public void Start()
        {
            var self = Process.GetCurrentProcess();
            broker.Refresh();
            (_own, _broker) = (self.TotalProcessorTime, broker.TotalProcessorTime);
            (_allocated, _gen0, _gen2, _pause) = (GC.GetTotalAllocatedBytes(), GC.CollectionCount(0), GC.CollectionCount(2), GC.GetTotalPauseDuration());
            (_started, _busy) = (Stopwatch.GetTimestamp(), MachineBusySeconds());
        }

        public Phase Stop(double rate)
        {
            var self = Process.GetCurrentProcess();
            broker.Refresh();
            var (own, brokerCpu) = (self.TotalProcessorTime - _own, broker.TotalProcessorTime - _broker);
            var others = (MachineBusySeconds() - _busy - own.TotalSeconds - brokerCpu.TotalSeconds) / Stopwatch.GetElapsedTime(_started).TotalSeconds;
            return new Phase(rate, own, brokerCpu, GC.GetTotalAllocatedBytes() - _allocated, GC.CollectionCount(0) - _gen0,
                GC.CollectionCount(2) - _gen2, GC.GetTotalPauseDuration() - _pause, Math.Max(0, others));
        }

        /// <summary>CPU seconds all processes have used since boot (user, nice, system, irq, softirq, steal); NaN without /proc.</summary>
        private static double MachineBusySeconds()
        {
            if (!File.Exists("/proc/stat"))
            {
                return double.NaN;
            }

            var fields = File.ReadLines("/proc/stat").First().Split(' ', StringSplitOptions.RemoveEmptyEntries);
            var ticks = new[] { 1, 2, 3, 6, 7, 8 }.Sum(i => long.Parse(fields[i], CultureInfo.InvariantCulture));
            return ticks / 100.0; // USER_HZ is 100 on Linux
        }
    }

    /// <summary>
    /// Collects the garbage of the phase before (a disposed host leaves dynamic methods whose
    /// finalizers otherwise keep the finalizer thread busy during the next phase).
    /// </summary>
    private static void Settle()
    {
        for (var i = 0; i < 3; i++)
        {
            GC.Collect();
            GC.WaitForPendingFinalizers();
        }
    }

    private static string LoadAverage() =>
        File.Exists("/proc/loadavg") ? string.Join(' ', File.ReadAllText("/proc/loadavg").Split(' ').Take(3)) : "n/a";

    private static byte[][] BuildPayloads(int messages, int perMessage)
    {
        var start = DateTimeOffset.UtcNow.AddMinutes(-30).ToUnixTimeMilliseconds();
        var result = new byte[messages][];
        var sb = new StringBuilder();
        for (var m = 0; m < messages; m++)
        {
            sb.Clear();
            sb.Append(CultureInfo.InvariantCulture, $"{{\"pub\":\"gw-load\",\"seq\":{m + 1},\"samples\":[");
            for (var s = 0; s < perMessage; s++)
            {
                var sensor = Sensors[s % Sensors.Length];
                var value = sensor[0] == 'T' ? 10.0 + (s * 0.01) : 0.5 + (s * 0.0001);
                var unit = sensor[0] == 'T' ? "degC" : "mV/V";
                sb.Append(CultureInfo.InvariantCulture, $"{(s > 0 ? "," : "")}{{\"sensor\":\"{sensor}\",\"ts\":{start + (m * 10) + (s / Sensors.Length)},\"value\":{value:R},\"unit\":\"{unit}\"}}");
            }

            sb.Append("]}");
            result[m] = Encoding.UTF8.GetBytes(sb.ToString());
        }

        return result;
    }

    private static async Task<Phase> MeasureBareAsync(int port, byte[][] payloads, int round, Meter meter)
    {
        var factory = new MqttClientFactory();
        using var subscriber = factory.CreateMqttClient();
        var received = 0;
        var done = new TaskCompletionSource();
        var first = 0L;
        subscriber.ApplicationMessageReceivedAsync += _ =>
        {
            if (Interlocked.Increment(ref received) == 1)
            {
                first = Stopwatch.GetTimestamp();
            }

            if (received == payloads.Length)
            {
                done.TrySetResult();
            }

            return Task.CompletedTask;
        };
        await subscriber.ConnectAsync(new MqttClientOptionsBuilder().WithTcpServer("127.0.0.1", port).WithClientId($"bare-sub-{round}")
            .WithCleanStart(false).WithSessionExpiryInterval(3600).Build()); // the service's session settings
        await subscriber.SubscribeAsync(factory.CreateSubscribeOptionsBuilder()
            .WithTopicFilter(f => f.WithTopic("silowatch/v1/telemetry/+/+").WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce)).Build());
        meter.Start();
        await PublishAllAsync(port, payloads, $"gw-bare-{round}");
        await done.Task.WaitAsync(TimeSpan.FromMinutes(5));
        var seconds = Stopwatch.GetElapsedTime(first).TotalSeconds;
        var phase = meter.Stop((payloads.Length - 1) / seconds);
        await subscriber.DisconnectAsync();
        await ForgetSessionAsync(port, $"bare-sub-{round}");
        return phase;
    }

    private static async Task<Phase> MeasureServiceAsync(int port, byte[][] payloads, int perMessage, string folder, int round, Meter meter)
    {
        var app = SiloWatchApp.Build([
            "--Mqtt:Host=127.0.0.1", $"--Mqtt:Port={port}", $"--Mqtt:ClientId=silowatch-load-{round}",
            "--Instance:Id=load-0", "--Instance:LogInterval=00:00:00", "--Demo:RunSimulator=false",
            "--Decoder:MaxLateness=00:00:00", "--Health:Urls=http://127.0.0.1:0", "--Serilog:MinimumLevel:Default=Warning", "--Serilog:MinimumLevel:Override:Microsoft.Hosting.Lifetime=Warning",
            $"--Storage:EmbeddedPath={Path.Combine(folder, $"series-{round}.db")}", $"--Storage:JournalPath={Path.Combine(folder, $"journal-{round}.db")}",
            $"--Instance:PlantFile={Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json")}",
            $"--Instance:MaterialsFile={Path.Combine(AppContext.BaseDirectory, "config", "materials.json")}"]);
        await app.StartAsync();
        var counters = app.Services.GetRequiredService<IngestCounters>();
        var bridge = app.Services.GetRequiredService<TelemetryBridgeService>();
        while (bridge.Client?.IsConnected != true)
        {
            await Task.Delay(50);
        }

        meter.Start();
        var publishing = PublishAllAsync(port, payloads, $"gw-svc-{round}");
        while (counters.Messages == 0)
        {
            await Task.Delay(1);
        }

        var first = Stopwatch.GetTimestamp();
        var deadline = DateTime.UtcNow.AddMinutes(5);
        while (counters.Samples < (long)payloads.Length * perMessage && DateTime.UtcNow < deadline)
        {
            await Task.Delay(2);
        }

        var seconds = Stopwatch.GetElapsedTime(first).TotalSeconds;
        var phase = meter.Stop((counters.Samples / (double)perMessage - 1) / seconds);
        await publishing;
        if (counters.RejectedTotal > 0)
        {
            Console.WriteLine($"warning: {counters.RejectedTotal} samples rejected");
        }

        await app.StopAsync();
        await app.DisposeAsync();
        await ForgetSessionAsync(port, $"silowatch-load-{round}");
        return phase;
    }

    private static async Task PublishAllAsync(int port, byte[][] payloads, string clientId)
    {
        using var publisher = new MqttClientFactory().CreateMqttClient();
        await publisher.ConnectAsync(new MqttClientOptionsBuilder().WithTcpServer("127.0.0.1", port).WithClientId(clientId).Build());
        const int Window = 256; // pipelined QoS 1: up to this many publishes in flight
        var inFlight = new Queue<Task>();
        foreach (var payload in payloads)
        {
            var message = new MqttApplicationMessageBuilder().WithTopic("silowatch/v1/telemetry/brackenford/S1")
                .WithPayload(payload).WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce).Build();
            inFlight.Enqueue(publisher.PublishAsync(message));
            if (inFlight.Count >= Window)
            {
                await inFlight.Dequeue();
            }
        }

        await Task.WhenAll(inFlight);
        await publisher.DisconnectAsync();
    }

    /// <summary>
    /// Ends a persistent session on the broker (clean start, no expiry), so that a later round does
    /// not make the broker queue every message for a subscriber that is gone.
    /// </summary>
    private static async Task ForgetSessionAsync(int port, string clientId)
    {
        using var client = new MqttClientFactory().CreateMqttClient();
        await client.ConnectAsync(new MqttClientOptionsBuilder().WithTcpServer("127.0.0.1", port).WithClientId(clientId)
            .WithCleanStart(true).WithSessionExpiryInterval(0).Build());
        await client.DisconnectAsync();
    }

    /// <summary>
    /// The consumer's own cost per message without the network: the service's pipeline of silo S1
    /// (decode, monitor, wall watch, alarms, sink through the downsampler into the embedded store)
    /// fed the load driver's payloads on this thread. Usage: ingest-path [messages] [samplesPerMessage] [repeats].
    /// The best of the repeats is printed beside the median: the best is the least disturbed by other load.
    /// </summary>
    public static async Task<int> RunPathAsync(string[] args)
    {
        var messages = args.Length > 0 ? int.Parse(args[0], CultureInfo.InvariantCulture) : 20_000;
        var perMessage = args.Length > 1 ? int.Parse(args[1], CultureInfo.InvariantCulture) : 50;
        var repeats = args.Length > 2 ? int.Parse(args[2], CultureInfo.InvariantCulture) : 5;
        var folder = Directory.CreateTempSubdirectory("silowatch-path-").FullName;
        try
        {
            var payloads = BuildPayloads(messages, perMessage);
            var results = new List<(double Us, double CpuUs, double Bytes)>();
            for (var r = 0; r < repeats; r++)
            {
                var app = SiloWatchApp.Build([
                    "--Mqtt:Host=127.0.0.1", "--Mqtt:Port=1", "--Instance:Id=path-0", "--Instance:LogInterval=00:00:00",
                    "--Demo:RunSimulator=false", "--Decoder:MaxLateness=00:00:00", "--Health:Urls=http://127.0.0.1:0",
                    "--Serilog:MinimumLevel:Default=Warning",
                    $"--Storage:EmbeddedPath={Path.Combine(folder, $"series-{r}.db")}", $"--Storage:JournalPath={Path.Combine(folder, $"journal-{r}.db")}",
                    $"--Instance:PlantFile={Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json")}",
                    $"--Instance:MaterialsFile={Path.Combine(AppContext.BaseDirectory, "config", "materials.json")}"]);
                var ingest = app.Services.GetRequiredService<TelemetryIngest>();
                var pipeline = ingest.Pipelines.First(p => p.Silo.Key == "brackenford/S1");
                var now = DateTimeOffset.UtcNow.ToUnixTimeMilliseconds();
                var allocated = GC.GetAllocatedBytesForCurrentThread();
                var cpu = ThreadCpu.Now();
                var started = Stopwatch.GetTimestamp();
                foreach (var payload in payloads)
                {
                    pipeline.Process(payload, now);
                }

                var elapsed = Stopwatch.GetElapsedTime(started);
                var cpuUsed = ThreadCpu.Now() - cpu;
                var bytes = GC.GetAllocatedBytesForCurrentThread() - allocated;
                if (pipeline.SamplesAccepted != (long)messages * perMessage)
                {
                    throw new InvalidOperationException($"only {pipeline.SamplesAccepted} of {messages * perMessage} samples accepted");
                }

                results.Add((elapsed.TotalMicroseconds / messages, cpuUsed.TotalMicroseconds / messages, bytes / (double)messages));
                await app.DisposeAsync();
            }

            var best = results.MinBy(x => x.Us);
            var median = results.OrderBy(x => x.Us).ElementAt(results.Count / 2);
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"ingest-path: {messages} messages of {perMessage} samples through the S1 pipeline on one thread, {repeats} repeats; load average {LoadAverage()}"));
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"per message: best {best.Us:F1} us ({best.Us * 1000 / perMessage:F0} ns per sample), median {median.Us:F1} us; allocated {best.Bytes:F0} B per message"));
            // CPU time is what the loop's thread used: on a shared machine it leaves out the time the thread
            // waited for a core, which the wall clock above includes.
            var cpuSorted = results.Select(x => x.CpuUs).Order().ToArray();
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"thread cpu per message: best {cpuSorted[0]:F1} us, median {cpuSorted[cpuSorted.Length / 2]:F1} us"));
            return 0;
        }
        finally
        {
            Directory.Delete(folder, recursive: true);
        }
    }

    /// <summary>
    /// CPU time of the calling thread: the first field of Linux's /proc/thread-self/schedstat
    /// (nanoseconds on a core); the process's CPU time where that file is missing.
    /// </summary>
    private static class ThreadCpu
    {
        public static TimeSpan Now()
        {
            const string Path = "/proc/thread-self/schedstat";
            if (File.Exists(Path))
            {
                var text = File.ReadAllText(Path);
                return TimeSpan.FromTicks(long.Parse(text.AsSpan(0, text.IndexOf(' ', StringComparison.Ordinal)), CultureInfo.InvariantCulture) / 100);
            }

            return Process.GetCurrentProcess().TotalProcessorTime;
        }
    }
}
