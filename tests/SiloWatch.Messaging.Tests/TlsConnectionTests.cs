using Microsoft.Extensions.Logging;
using SiloWatch.Messaging.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Messaging.Tests;

/// <summary>
/// TLS with CA validation against a Mosquitto TLS listener whose certificates the fixture makes.
/// Without mosquitto the tests return early with a note, unless SILOWATCH_REQUIRE_SERVERS=1.
/// </summary>
public sealed class TlsConnectionTests(TlsMosquitto mosquitto, ITestOutputHelper output) : IClassFixture<TlsMosquitto>, IAsyncLifetime
{
    private readonly MqttTestEnvironment _env = new(output);

    public Task InitializeAsync() => Task.CompletedTask;

    public async Task DisposeAsync() => await _env.DisposeAsync();

    [Fact]
    public async Task WithTheBrokersCaTheClientConnectsOverTlsAndAQos1MessageMakesTheRoundTrip()
    {
        if (!Ready())
        {
            return;
        }

        var topic = new TopicScheme("silowatch").Events("tls-test", "S1");
        var options = TlsOptions("tls-good", mosquitto.CaFile);
        var (client, received, log) = _env.Client(options, "tls-good", topic);
        await client.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(client);

        await MqttTestEnvironment.PublishAsync(client, topic, "over tls");

        Assert.Equal("over tls", (await MqttTestEnvironment.NextAsync(received, m => m.Topic == topic)).Payload);
        log.AssertNoErrors();
    }

    [Theory]
    [InlineData(false, "does not validate")]
    [InlineData(true, "does not chain")]
    public async Task AServerCertificateThatDoesNotChainToTheGivenCaIsRefusedAndLogged(bool otherCa, string expected)
    {
        if (!Ready())
        {
            return;
        }

        var id = otherCa ? "tls-other-ca" : "tls-no-ca";
        var (client, _, log) = _env.Client(TlsOptions(id, otherCa ? mosquitto.OtherCaFile : ""), id);

        await client.StartAsync(CancellationToken.None);
        await WaitUntil(() => log.Count(LogLevel.Debug, "attempt 2 failed") > 0);

        Assert.False(client.IsConnected);
        var error = Assert.Single(log.Errors);
        Assert.Contains(expected, error.Message, StringComparison.Ordinal);
    }

    [Fact]
    public async Task AllowingUntrustedCertificatesConnectsAndSaysSoInTheLog()
    {
        if (!Ready())
        {
            return;
        }

        var options = TlsOptions("tls-untrusted", "");
        options.AllowUntrustedCertificates = true;
        var (client, _, log) = _env.Client(options, "tls-untrusted");

        await client.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(client);

        Assert.Equal(1, log.Count(LogLevel.Warning, "NOT checked"));
    }

    private MqttOptions TlsOptions(string clientId, string caFile)
    {
        var options = MqttTestEnvironment.Options(mosquitto.Port, clientId);
        options.UseTls = true;
        options.CaFile = caFile;
        return options;
    }

    private bool Ready()
    {
        if (mosquitto.Available)
        {
            return true;
        }

        Assert.False(Environment.GetEnvironmentVariable("SILOWATCH_REQUIRE_SERVERS") == "1",
            "SILOWATCH_REQUIRE_SERVERS=1 but the TLS Mosquitto is not available: " + mosquitto.Missing);
        output.WriteLine("TLS test did NOT run: " + mosquitto.Missing);
        return false;
    }

    private static async Task WaitUntil(Func<bool> condition)
    {
        var deadline = DateTime.UtcNow + MqttTestEnvironment.Patience;
        while (!condition())
        {
            Assert.True(DateTime.UtcNow < deadline, "condition not met within the (generous) patience");
            await Task.Delay(20);
        }
    }
}
