using Microsoft.Extensions.Options;

namespace SiloWatch.Storage;

/// <summary>Checks <see cref="StorageOptions"/>; every failure names the key and the value.</summary>
public sealed class StorageOptionsValidator : IValidateOptions<StorageOptions>
{
    public const long MinSpoolBytes = 64 * 1024;

    public ValidateOptionsResult Validate(string? name, StorageOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        var failures = new List<string>();
        var ts = options.TimeSeries;
        const string P = StorageOptions.SectionName + ":TimeSeries:";

        if (ts.Url.Length > 0 && !(Uri.TryCreate(ts.Url, UriKind.Absolute, out var uri) && (uri.Scheme == Uri.UriSchemeHttp || uri.Scheme == Uri.UriSchemeHttps)))
        {
            failures.Add($"{P}Url = '{ts.Url}': must be an absolute http or https URL, or empty for the embedded store");
        }

        if (ts.Url.Length > 0 && string.IsNullOrWhiteSpace(ts.Bucket))
        {
            failures.Add($"{P}Bucket = '{ts.Bucket}': required when Url is set");
        }

        if (ts.BatchSize is < 1 or > 100_000)
        {
            failures.Add($"{P}BatchSize = '{ts.BatchSize}': must be 1 to 100000");
        }

        if (ts.FlushInterval <= TimeSpan.Zero || ts.FlushInterval > TimeSpan.FromMinutes(5))
        {
            failures.Add($"{P}FlushInterval = '{ts.FlushInterval}': must be above 0 and at most 00:05:00");
        }

        if (ts.BufferCapacityPoints < ts.BatchSize)
        {
            failures.Add($"{P}BufferCapacityPoints = '{ts.BufferCapacityPoints}': must be at least BatchSize ({ts.BatchSize})");
        }

        if (ts.RequestTimeout <= TimeSpan.Zero)
        {
            failures.Add($"{P}RequestTimeout = '{ts.RequestTimeout}': must be above 0");
        }

        if (string.IsNullOrWhiteSpace(ts.SpoolDirectory))
        {
            failures.Add($"{P}SpoolDirectory = '{ts.SpoolDirectory}': required");
        }

        if (ts.SpoolMaxBytes < MinSpoolBytes)
        {
            failures.Add($"{P}SpoolMaxBytes = '{ts.SpoolMaxBytes}': must be at least {MinSpoolBytes}");
        }

        if (ts.SpoolAlarmPercent is < 1 or > 100)
        {
            failures.Add($"{P}SpoolAlarmPercent = '{ts.SpoolAlarmPercent}': must be 1 to 100");
        }

        if (ts.Retry.MaxAttempts is < 0 or > 20)
        {
            failures.Add($"{P}Retry:MaxAttempts = '{ts.Retry.MaxAttempts}': must be 0 to 20");
        }

        if (ts.Retry.BaseDelay <= TimeSpan.Zero || ts.Retry.MaxDelay < ts.Retry.BaseDelay)
        {
            failures.Add($"{P}Retry:BaseDelay = '{ts.Retry.BaseDelay}', MaxDelay = '{ts.Retry.MaxDelay}': need 0 < BaseDelay <= MaxDelay");
        }

        if (string.IsNullOrWhiteSpace(options.EmbeddedPath))
        {
            failures.Add($"{StorageOptions.SectionName}:EmbeddedPath = '{options.EmbeddedPath}': required");
        }

        if (options.EmbeddedRetention <= TimeSpan.Zero)
        {
            failures.Add($"{StorageOptions.SectionName}:EmbeddedRetention = '{options.EmbeddedRetention}': must be above 0");
        }

        if (string.IsNullOrWhiteSpace(options.JournalPath))
        {
            failures.Add($"{StorageOptions.SectionName}:JournalPath = '{options.JournalPath}': required");
        }

        foreach (var (measurement, rule) in options.Downsampling)
        {
            if (rule.Interval < TimeSpan.Zero || (rule.Interval > TimeSpan.Zero && rule.Interval < TimeSpan.FromMilliseconds(1)))
            {
                failures.Add($"{StorageOptions.SectionName}:Downsampling:{measurement}:Interval = '{rule.Interval}': must be 00:00:00 (off) or at least 1 ms");
            }
            else if (rule.Interval > TimeSpan.Zero
                && (rule.LateMergeWindow < TimeSpan.Zero || rule.LateMergeWindow > TimeSpan.FromHours(1) || Downsampler.LateIntervals(rule) > DownsamplingOptions.MaxLateMergeIntervals))
            {
                failures.Add($"{StorageOptions.SectionName}:Downsampling:{measurement}:LateMergeWindow = '{rule.LateMergeWindow}': must be 00:00:00 to 01:00:00 and at most {DownsamplingOptions.MaxLateMergeIntervals} intervals of {rule.Interval}");
            }
        }

        return failures.Count == 0 ? ValidateOptionsResult.Success : ValidateOptionsResult.Fail(failures);
    }
}
