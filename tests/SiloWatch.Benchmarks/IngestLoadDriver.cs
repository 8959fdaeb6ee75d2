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
/// Usage: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- ingest-load [messages] [samplesPerMessage]
/// </summary>
public static class IngestLoadDriver
{
    private static readonly string[] Sensors = ["LC1", "LC2", "LC3", "LC4", "T-R1-000"];

    public static async Task<int> RunAsync(string[] args)
    {
        var messages = args.Length > 0 ? int.Parse(args[0], CultureInfo.InvariantCulture) : 50_000;
        var perMessage = args.Length > 1 ? int.Parse(args[1], CultureInfo.InvariantCulture) : 50;
        var mosquitto = new[] { "/usr/sbin/mosquitto", "/usr/bin/mosquitto" }.FirstOrDefault(File.Exists)
            ?? throw new InvalidOperationException("mosquitto is not installed (apt-get install mosquitto)");
        var folder = Directory.CreateTempSubdirectory("silowatch-load-").FullName;
        if (!OperatingSystem.IsWindows())
        {
            File.SetUnixFileMode(folder, (UnixFileMode)0x1FF);
        }
        var port = FreePort();
        var conf = Path.Combine(folder, "mosquitto.conf");
        await File.WriteAllTextAsync(conf, $"listener {port} 127.0.0.1\nallow_anonymous true\nset_tcp_nodelay true\nmax_queued_messages 0\nmax_inflight_messages 0\n");
        using var broker = Process.Start(new ProcessStartInfo(mosquitto, ["-c", conf]) { RedirectStandardError = true })!;
        await Task.Delay(500);
        try
        {
            var payloads = BuildPayloads(messages, perMessage);
            Console.WriteLine($"{messages} messages of {perMessage} samples (~{payloads[0].Length} bytes) through mosquitto on 127.0.0.1:{port}, QoS 1");

            var bare = await MeasureBareAsync(port, payloads);
            Console.WriteLine($"bare MQTTnet subscriber: {bare:N0} msg/s ({bare * perMessage:N0} samples/s)");

            var service = await MeasureServiceAsync(port, payloads, perMessage);
            Console.WriteLine($"SiloWatch service:       {service:N0} msg/s ({service * perMessage:N0} samples/s)");
            Console.WriteLine($"ratio service/bare:      {service / bare:P1}");
            return 0;
        }
        finally
        {
            broker.Kill();
            Directory.Delete(folder, recursive: true);
        }
    }

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

    private static async Task<double> MeasureBareAsync(int port, byte[][] payloads)
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
        await subscriber.ConnectAsync(new MqttClientOptionsBuilder().WithTcpServer("127.0.0.1", port).WithClientId("bare-sub").Build());
        await subscriber.SubscribeAsync(factory.CreateSubscribeOptionsBuilder()
            .WithTopicFilter(f => f.WithTopic("silowatch/v1/telemetry/+/+").WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce)).Build());
        await PublishAllAsync(port, payloads, "gw-bare");
        await done.Task.WaitAsync(TimeSpan.FromMinutes(5));
        var seconds = Stopwatch.GetElapsedTime(first).TotalSeconds;
        await subscriber.DisconnectAsync();
        return (payloads.Length - 1) / seconds;
    }

    private static async Task<double> MeasureServiceAsync(int port, byte[][] payloads, int perMessage)
    {
        var app = SiloWatchApp.Build([
            "--Mqtt:Host=127.0.0.1", $"--Mqtt:Port={port}", "--Mqtt:ClientId=silowatch-load",
            "--Instance:Id=load-0", "--Instance:LogInterval=00:00:00", "--Demo:RunSimulator=false",
            "--Decoder:MaxLateness=00:00:00", "--Health:Urls=http://127.0.0.1:0", "--Serilog:MinimumLevel:Default=Warning",
            $"--Instance:PlantFile={Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json")}",
            $"--Instance:MaterialsFile={Path.Combine(AppContext.BaseDirectory, "config", "materials.json")}"]);
        await app.StartAsync();
        var counters = app.Services.GetRequiredService<IngestCounters>();
        var bridge = app.Services.GetRequiredService<TelemetryBridgeService>();
        while (bridge.Client?.IsConnected != true)
        {
            await Task.Delay(50);
        }

        var publishing = PublishAllAsync(port, payloads, "gw-svc");
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
        await publishing;
        if (counters.RejectedTotal > 0)
        {
            Console.WriteLine($"warning: {counters.RejectedTotal} samples rejected");
        }

        await app.StopAsync();
        await app.DisposeAsync();
        return (counters.Samples / (double)perMessage - 1) / seconds;
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

    private static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }
}
