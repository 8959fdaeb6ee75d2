using System.Text;
using MQTTnet;
using MQTTnet.Protocol;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>An operator's tool on the broker: publishes commands with the MQTT v5 user property "user".</summary>
public sealed class OperatorClient : IAsyncDisposable
{
    private readonly IMqttClient _client;

    private OperatorClient(IMqttClient client) => _client = client;

    public static async Task<OperatorClient> ConnectAsync(int port, string clientId)
    {
        var client = new MqttClientFactory().CreateMqttClient();
        var result = await client.ConnectAsync(new MqttClientOptionsBuilder()
            .WithTcpServer("127.0.0.1", port)
            .WithClientId(clientId)
            .WithProtocolVersion(MQTTnet.Formatter.MqttProtocolVersion.V500)
            .WithCleanStart(true)
            .Build());
        Assert.Equal(MqttClientConnectResultCode.Success, result.ResultCode);
        return new OperatorClient(client);
    }

    public Task CommandAsync(string site, string silo, string user, string json) =>
        _client.PublishAsync(new MqttApplicationMessageBuilder()
            .WithTopic($"silowatch/v1/command/{site}/{silo}")
            .WithPayload(Encoding.UTF8.GetBytes(json))
            .WithUserProperty("user", Encoding.UTF8.GetBytes(user).AsMemory())
            .WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce)
            .Build());

    public async ValueTask DisposeAsync()
    {
        if (_client.IsConnected)
        {
            await _client.DisconnectAsync();
        }

        _client.Dispose();
    }
}
