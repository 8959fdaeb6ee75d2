namespace SiloWatch.Storage;

/// <summary>
/// Finds the time-series store's API token: the environment variable
/// <see cref="StorageOptions.TokenEnvironmentVariable"/> first, then the first line of
/// <see cref="TimeSeriesOptions.TokenFile"/>. The token is never logged nor kept in options.
/// </summary>
public static class TokenSource
{
    /// <summary>Returns the token, or "" when none is configured (VictoriaMetrics needs none).</summary>
    /// <exception cref="InvalidOperationException">The token file is configured but cannot be read.</exception>
    public static string Resolve(TimeSeriesOptions options, Func<string, string?>? environment = null)
    {
        ArgumentNullException.ThrowIfNull(options);
        environment ??= Environment.GetEnvironmentVariable;
        var fromEnvironment = environment(StorageOptions.TokenEnvironmentVariable);
        if (!string.IsNullOrWhiteSpace(fromEnvironment))
        {
            return fromEnvironment.Trim();
        }

        if (string.IsNullOrWhiteSpace(options.TokenFile))
        {
            return "";
        }

        try
        {
            using var reader = new StreamReader(options.TokenFile);
            return (reader.ReadLine() ?? "").Trim();
        }
        catch (Exception ex) when (ex is IOException or UnauthorizedAccessException)
        {
            // The message names the file, never its content.
            throw new InvalidOperationException(
                $"Storage:TimeSeries:TokenFile = '{options.TokenFile}': cannot read the token file ({ex.GetType().Name}).", ex);
        }
    }
}
