using System.Globalization;
using Microsoft.Extensions.Logging;
using MQTTnet.Diagnostics.Logger;

namespace SiloWatch.Messaging;

/// <summary>Forwards MQTTnet's own log to an <see cref="ILogger"/>; MQTTnet's verbose level becomes Trace.</summary>
internal sealed partial class MqttNetLoggerAdapter(ILogger logger, string component) : IMqttNetLogger
{
    public bool IsEnabled => logger.IsEnabled(LogLevel.Trace) || logger.IsEnabled(LogLevel.Information);

    public void Publish(MqttNetLogLevel logLevel, string source, string message, object[] parameters, Exception exception)
    {
        var level = logLevel switch
        {
            MqttNetLogLevel.Error => LogLevel.Error,
            MqttNetLogLevel.Warning => LogLevel.Warning,
            MqttNetLogLevel.Info => LogLevel.Information,
            _ => LogLevel.Trace,
        };

        // MQTTnet's informational chatter (every connect and session) is debug detail for us.
        if (level == LogLevel.Information)
        {
            level = LogLevel.Debug;
        }

        if (!logger.IsEnabled(level))
        {
            return;
        }

        var text = parameters is { Length: > 0 } ? string.Format(CultureInfo.InvariantCulture, message, parameters) : message;
        LogMqttNet(logger, level, exception, component, source, text);
    }

    [LoggerMessage(Message = "MQTTnet {Component} {Source}: {Text}")]
    private static partial void LogMqttNet(ILogger logger, LogLevel level, Exception? exception, string component, string source, string text);
}
