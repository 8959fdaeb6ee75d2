namespace SiloWatch.Messaging.Tests;

public sealed class MqttOptionsTests
{
    [Fact]
    public void TheDefaultsStartTheEmbeddedBrokerWithAPersistentSession()
    {
        var options = new MqttOptions();

        Assert.Equal("", options.Host);
        Assert.Equal("127.0.0.1", options.EffectiveHost);
        Assert.Equal(1883, options.Port);
        Assert.StartsWith("silowatch-", options.ClientId, StringComparison.Ordinal);
        Assert.Equal(TimeSpan.FromDays(1), options.SessionExpiry);
        Assert.Equal("silowatch", options.TopicPrefix);
        Assert.Equal(256 * 1024, options.MaxPayloadBytes);
        Assert.False(options.AllowUntrustedCertificates);
        Assert.True(new MqttOptionsValidator().Validate(null, options).Succeeded);
    }

    [Fact]
    public void OptionsHaveNoPasswordPropertySoConfigurationCannotCarryOne() =>
        Assert.DoesNotContain(typeof(MqttOptions).GetProperties(), p => p.Name.Equals("Password", StringComparison.OrdinalIgnoreCase));

    [Fact]
    public void ThePasswordComesFromTheEnvironmentFirstThenFromTheFile()
    {
        var file = Path.GetTempFileName();
        try
        {
            File.WriteAllText(file, "from-file\nsecond line is ignored\n");
            var options = new MqttOptions { PasswordFile = file };

            Assert.Equal("from-env", options.ResolvePassword(_ => "from-env"));
            Assert.Equal("from-file", options.ResolvePassword(_ => null));
            Assert.Null(new MqttOptions().ResolvePassword(_ => null));
        }
        finally
        {
            File.Delete(file);
        }
    }

    [Fact]
    public void AnUnreadablePasswordFileIsAnIoError() =>
        Assert.Throws<IOException>(() => new MqttOptions { PasswordFile = "/nonexistent/silowatch/pw" }.ResolvePassword(_ => null));

    [Fact]
    public void BadSettingsAreReportedWithTheirKeyAndValue()
    {
        var options = new MqttOptions
        {
            Host = "broker.local",
            Port = 0,
            TopicPrefix = "a/b",
            KeepAlive = TimeSpan.Zero,
            ReconnectDelay = TimeSpan.FromSeconds(10),
            ReconnectDelayMax = TimeSpan.FromSeconds(5),
            CaFile = "/nonexistent/ca.pem",
            MaxPayloadBytes = 10,
        };

        var result = new MqttOptionsValidator().Validate(null, options);

        Assert.True(result.Failed);
        var failures = result.Failures!.ToList();
        Assert.Contains(failures, f => f.StartsWith("Mqtt:Port = '0'", StringComparison.Ordinal));
        Assert.Contains(failures, f => f.StartsWith("Mqtt:TopicPrefix = 'a/b'", StringComparison.Ordinal));
        Assert.Contains(failures, f => f.StartsWith("Mqtt:KeepAlive", StringComparison.Ordinal));
        Assert.Contains(failures, f => f.StartsWith("Mqtt:ReconnectDelayMax", StringComparison.Ordinal));
        Assert.Contains(failures, f => f.StartsWith("Mqtt:CaFile = '/nonexistent/ca.pem': file not found", StringComparison.Ordinal));
        Assert.Contains(failures, f => f.StartsWith("Mqtt:UseTls", StringComparison.Ordinal));
        Assert.Contains(failures, f => f.StartsWith("Mqtt:MaxPayloadBytes = '10'", StringComparison.Ordinal));
    }
}
