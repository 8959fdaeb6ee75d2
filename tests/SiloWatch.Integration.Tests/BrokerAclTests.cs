using System.Net.Http.Json;
using System.Text.Json;
using MQTTnet;
using Microsoft.Extensions.DependencyInjection;
using Serilog.Core;
using Serilog.Events;
using SiloWatch.Integration.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// The broker ACL of deploy/mosquitto against a real Mosquitto with passwords: what each user of it
/// may and may not do, the service working under its own user, and a publish the ACL refuses being
/// detected (MQTT 5: Mosquitto 2.0 answers a denied QoS 1 PUBLISH with PUBACK reason 0x87
/// NotAuthorized; seen here with `mosquitto_pub -V 5 -q 1 -d` against 2.0.11, "received PUBACK (Mid: 1,
/// RC:135)", and in eclipse-paho/paho.mqtt.python issue 474, broker log "Sending PUBACK ... rc135").
/// </summary>
public sealed class BrokerAclTests(ITestOutputHelper output)
{
    private const string Site = "brackenford";
    private const string Prefix = "silowatch/v1";

    [Fact]
    public async Task TheDeployAclLetsTheServiceUserReadTelemetryAndCommandsAndWriteItsOwnTopicsOnly()
    {
        if (await AclBroker.StartOrNullAsync() is not var (broker, passwords))
        {
            return;
        }

        await using var _ = broker;
        using var dump = new LogOnFailure(() => output.WriteLine(broker.Log));
        await using var service = await TestMqtt.ConnectAsync(broker.Port, "acl-svc", (AclBroker.ServiceUser, passwords[AclBroker.ServiceUser]),
            $"{Prefix}/telemetry/#", $"{Prefix}/command/#", $"{Prefix}/state/#");
        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "acl-gw", (AclBroker.GatewayUser, passwords[AclBroker.GatewayUser]));
        await using var tool = await TestMqtt.ConnectAsync(broker.Port, "acl-op", (AclBroker.OperatorUser, passwords[AclBroker.OperatorUser]),
            $"{Prefix}/state/#", $"{Prefix}/alarms/#", $"{Prefix}/events/#", $"{Prefix}/deadletter/#", $"{Prefix}/instance/#");

        // What the service writes: each accepted by the broker and delivered to the operator's tool.
        string[] serviceWrites =
        [
            $"{Prefix}/state/{Site}/S1", $"{Prefix}/alarms/{Site}/S1", $"{Prefix}/events/{Site}/S1",
            $"{Prefix}/deadletter/{Site}/S1", $"{Prefix}/instance/silowatch-0",
        ];
        foreach (var topic in serviceWrites)
        {
            await AssertAcceptedAsync(service, topic);
        }

        await TestMqtt.WaitForAsync(() => serviceWrites.All(t => tool.Received.Any(m => m.Topic == t)), "the operator's tool received every topic the service wrote");

        // What it reads: the gateway's telemetry and the operator's commands.
        await AssertAcceptedAsync(gateway, $"{Prefix}/telemetry/{Site}/S1");
        await AssertAcceptedAsync(tool, $"{Prefix}/command/{Site}/S1", user: "op-anna");
        await TestMqtt.WaitForAsync(() => service.Received.Any(m => m.Topic == $"{Prefix}/telemetry/{Site}/S1")
            && service.Received.Any(m => m.Topic == $"{Prefix}/command/{Site}/S1"), "the service user received telemetry and a command");

        // What it must not do: pose as a gateway or an operator.
        await AssertRefusedAsync(service, $"{Prefix}/telemetry/{Site}/S1");
        await AssertRefusedAsync(service, $"{Prefix}/command/{Site}/S1");
        // Nor may the gateway write another site or a command, nor the operator's tool write telemetry.
        await AssertRefusedAsync(gateway, $"{Prefix}/telemetry/other-site/S1");
        await AssertRefusedAsync(gateway, $"{Prefix}/command/{Site}/S1");
        await AssertRefusedAsync(tool, $"{Prefix}/telemetry/{Site}/S1");

        // The service user subscribed to state/# (it needs not to), and the ACL delivers none of it: the
        // operator's tool got the state message above, the service user did not. A marker on a topic it
        // may read, sent after, shows the delivery had time to happen.
        await AssertAcceptedAsync(gateway, $"{Prefix}/telemetry/{Site}/MARK");
        await TestMqtt.WaitForAsync(() => service.Received.Any(m => m.Topic.EndsWith("/MARK", StringComparison.Ordinal)), "the marker");
        Assert.DoesNotContain(service.Received, m => m.Topic.StartsWith($"{Prefix}/state/", StringComparison.Ordinal));
        Assert.Single(service.Received, m => m.Topic == $"{Prefix}/telemetry/{Site}/S1"); // its own refused one never arrived
        Assert.Contains("Denied PUBLISH", broker.Log, StringComparison.Ordinal);
    }

    [Fact]
    public async Task UnderItsOwnUserAndTheDeployAclTheServicePublishesStateDeadLettersStatusAndCommandAnswersWithNoRefusal()
    {
        if (await AclBroker.StartOrNullAsync() is not var (broker, passwords))
        {
            return;
        }

        await using var _ = broker;
        await using var tool = await TestMqtt.ConnectAsync(broker.Port, "acl-op2", (AclBroker.OperatorUser, passwords[AclBroker.OperatorUser]),
            $"{Prefix}/state/{Site}/S1", $"{Prefix}/deadletter/#", $"{Prefix}/events/#", $"{Prefix}/instance/#");
        await using var service = await StartServiceAsync(broker.Port, "acl-ok", passwords, logs: null);
        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "acl-gw2", (AclBroker.GatewayUser, passwords[AclBroker.GatewayUser]));

        var now = DateTimeOffset.UtcNow;
        await gateway.PublishBatchAsync(Site, "S1", now, S1Cells(0.5));
        await gateway.PublishBatchAsync(Site, "S1", now.AddSeconds(1), [("LC9", 0.5, "mV/V")]);
        await tool.PublishRawAsync($"{Prefix}/command/{Site}/S1", """{"id":"c-acl","action":"acknowledge","alarm":"overfill"}""", user: "op-anna");

        await TestMqtt.WaitForAsync(() => tool.Received.Any(m => m.Topic.StartsWith($"{Prefix}/instance/", StringComparison.Ordinal) && m.Payload.Contains("\"online\"", StringComparison.Ordinal))
            && tool.Received.Any(m => m.Topic == $"{Prefix}/deadletter/{Site}/S1" && m.Payload.Contains("unknown-sensor", StringComparison.Ordinal))
            && tool.Received.Any(m => m.Topic == $"{Prefix}/events/{Site}/S1" && m.Payload.Contains("c-acl", StringComparison.Ordinal))
            && tool.Received.Any(m => m.Topic == $"{Prefix}/state/{Site}/S1" && SampleTs(m.Payload) == now.ToUnixTimeMilliseconds()),
            "online status, the dead letter, the command's answer and a state that includes the last good sample");

        var health = await HealthAsync(service);
        Assert.Equal(0, health.GetProperty("publishRefusals").GetProperty("total").GetInt64());
        Assert.Equal("healthy", health.GetProperty("status").GetString());
        Assert.Equal(5, service.Accepted($"{Site}/S1"));
    }

    [Fact]
    public async Task AMessageTheBrokersAclRefusesIsCountedLoggedOnceAndShownInHealthWhileAllowedTrafficGoesOn()
    {
        // An ACL that forgot the service's dead-letter topic: every dead letter is refused by the broker.
        var acl = string.Join('\n', AclBroker.DeployAcl.Split('\n').Where(l => l.Trim() != "topic write silowatch/v1/deadletter/#"));
        Assert.NotEqual(AclBroker.DeployAcl.Split('\n').Length, acl.Split('\n').Length);
        if (await AclBroker.StartOrNullAsync(acl) is not var (broker, passwords))
        {
            return;
        }

        await using var _ = broker;
        using var dump = new LogOnFailure(() => output.WriteLine(broker.Log));
        var logs = new CollectingLogSink();
        await using var tool = await TestMqtt.ConnectAsync(broker.Port, "acl-op3", (AclBroker.OperatorUser, passwords[AclBroker.OperatorUser]),
            $"{Prefix}/state/{Site}/S1", $"{Prefix}/deadletter/#");
        await using var service = await StartServiceAsync(broker.Port, "acl-deny", passwords, logs);
        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "acl-gw3", (AclBroker.GatewayUser, passwords[AclBroker.GatewayUser]));

        const int Bad = 20;
        var start = DateTimeOffset.UtcNow.AddSeconds(-30);
        for (var i = 0; i < Bad; i++)
        {
            await gateway.PublishBatchAsync(Site, "S1", start.AddSeconds(i), [("LC9", 0.5, "mV/V")]);
        }

        await TestMqtt.WaitForAsync(() => service.Refusals.Total >= Bad, $"{Bad} dead letters refused by the broker");

        // Allowed traffic goes on after the refusals: samples published now reach a published state.
        var after = DateTimeOffset.UtcNow;
        await gateway.PublishBatchAsync(Site, "S1", after, S1Cells(0.5));
        await TestMqtt.WaitForAsync(() => tool.Received.Any(m => m.Topic == $"{Prefix}/state/{Site}/S1" && SampleTs(m.Payload) == after.ToUnixTimeMilliseconds()),
            "a state that includes the sample sent after the refusals");

        Assert.Equal(Bad, service.Refusals.Total);
        Assert.DoesNotContain(tool.Received, m => m.Topic.StartsWith($"{Prefix}/deadletter/", StringComparison.Ordinal));
        Assert.Contains($"Denied PUBLISH from silowatch-acl-deny", broker.Log, StringComparison.Ordinal);

        // Logged once (rate limited), naming the topic, the reason and the user; never the password.
        var lines = logs.Events.Where(e => e.Level == LogEventLevel.Error && e.RenderMessage().Contains("refused the message", StringComparison.Ordinal)).ToList();
        var line = Assert.Single(lines).RenderMessage();
        output.WriteLine(line);
        Assert.Contains($"{Prefix}/deadletter/{Site}/S1", line, StringComparison.Ordinal);
        Assert.Contains("NotAuthorized", line, StringComparison.Ordinal);
        Assert.Contains(AclBroker.ServiceUser, line, StringComparison.Ordinal);
        Assert.DoesNotContain(logs.Events, e => e.RenderMessage().Contains(passwords[AclBroker.ServiceUser], StringComparison.Ordinal));

        // /health counts them by kind, names the last one and reports the instance degraded.
        using var http = new HttpClient { BaseAddress = service.BaseAddress };
        using var response = await http.GetAsync(new Uri("/health", UriKind.Relative));
        Assert.Equal(System.Net.HttpStatusCode.ServiceUnavailable, response.StatusCode);
        var health = await response.Content.ReadFromJsonAsync<JsonElement>();
        var refusals = health.GetProperty("publishRefusals");
        output.WriteLine(refusals.ToString());
        Assert.Equal("degraded", health.GetProperty("status").GetString());
        Assert.Equal(Bad, refusals.GetProperty("total").GetInt64());
        Assert.Equal(Bad, refusals.GetProperty("byKind").GetProperty("deadletter").GetInt64());
        Assert.True(refusals.GetProperty("recent").GetBoolean());
        Assert.Equal($"{Prefix}/deadletter/{Site}/S1", refusals.GetProperty("last").GetProperty("topic").GetString());
        Assert.Equal("NotAuthorized", refusals.GetProperty("last").GetProperty("reason").GetString());
        Assert.True(health.GetProperty("broker").GetProperty("connected").GetBoolean());
        Assert.Equal(0, health.GetProperty("broker").GetProperty("reconnects").GetInt64()); // a refusal does not cost the connection
        Assert.DoesNotContain("Bad socket read/write on client silowatch-acl-deny", broker.Log, StringComparison.Ordinal);
    }

    private static async Task<ServiceUnderTest> StartServiceAsync(int port, string instance, IReadOnlyDictionary<string, string> passwords, CollectingLogSink? logs)
    {
        // The password comes from a file, as in deploy/ (never on the command line or in settings).
        var passwordFile = Path.Combine(Path.GetTempPath(), $"silowatch-it-{Environment.ProcessId}-{instance}.pw");
        await File.WriteAllTextAsync(passwordFile, passwords[AclBroker.ServiceUser] + "\n");
        return await ServiceUnderTest.StartAsync(port, instance,
            logs is null ? null : b => b.Services.AddSingleton<ILogEventSink>(logs),
            ("Mqtt:Username", AclBroker.ServiceUser), ("Mqtt:PasswordFile", passwordFile), ("Commands:AllowedUsers:0", "op-anna"));
    }

    private static async Task<JsonElement> HealthAsync(ServiceUnderTest service)
    {
        using var http = new HttpClient { BaseAddress = service.BaseAddress };
        return await http.GetFromJsonAsync<JsonElement>(new Uri("/health", UriKind.Relative));
    }

    private static long? SampleTs(string statePayload)
    {
        using var json = JsonDocument.Parse(statePayload);
        return json.RootElement.TryGetProperty("sampleTs", out var ts) && ts.ValueKind == JsonValueKind.String
            ? ts.GetDateTimeOffset().ToUnixTimeMilliseconds()
            : null;
    }

    private static async Task AssertAcceptedAsync(TestMqtt client, string topic, string? user = null)
    {
        var result = await client.PublishRawAsync(topic, "{}", user);
        Assert.True(result.ReasonCode is MqttClientPublishReasonCode.Success or MqttClientPublishReasonCode.NoMatchingSubscribers,
            $"{client.Publisher} to {topic}: {result.ReasonCode}");
    }

    private static async Task AssertRefusedAsync(TestMqtt client, string topic)
    {
        var result = await client.PublishRawAsync(topic, "{}");
        Assert.True(result.ReasonCode == MqttClientPublishReasonCode.NotAuthorized, $"{client.Publisher} to {topic}: {result.ReasonCode}, expected NotAuthorized");
    }

    private static (string, double, string)[] S1Cells(double mvPerV) =>
        [("LC1", mvPerV, "mV/V"), ("LC2", mvPerV, "mV/V"), ("LC3", mvPerV, "mV/V"), ("LC4", mvPerV, "mV/V"), ("T-R1-000", 12.0, "degC")];

    private sealed class LogOnFailure(Action write) : IDisposable
    {
        public void Dispose() => write();
    }
}
