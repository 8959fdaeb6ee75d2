using SiloWatch.Storage.Tests.Support;

namespace SiloWatch.Storage.Tests;

public sealed class StorageOptionsTests
{
    [Fact]
    public void TheDefaultsAreValidAndSelectTheEmbeddedStore()
    {
        var options = new StorageOptions();

        Assert.True(new StorageOptionsValidator().Validate(null, options).Succeeded);
        Assert.Equal("", options.TimeSeries.Url);
        Assert.Equal("data/silowatch-series.db", options.EmbeddedPath);
        Assert.Equal("data/silowatch-journal.db", options.JournalPath);
        Assert.Equal(80, options.TimeSeries.SpoolAlarmPercent);
    }

    [Fact]
    public void EachBadSettingIsNamedWithItsValue()
    {
        var options = new StorageOptions();
        options.TimeSeries.Url = "ftp://x";
        options.TimeSeries.BatchSize = 0;
        options.TimeSeries.SpoolMaxBytes = 10;
        options.TimeSeries.FlushInterval = TimeSpan.Zero;

        var result = new StorageOptionsValidator().Validate(null, options);

        Assert.True(result.Failed);
        Assert.Contains("Storage:TimeSeries:Url = 'ftp://x'", result.FailureMessage, StringComparison.Ordinal);
        Assert.Contains("Storage:TimeSeries:BatchSize = '0'", result.FailureMessage, StringComparison.Ordinal);
        Assert.Contains("Storage:TimeSeries:SpoolMaxBytes = '10'", result.FailureMessage, StringComparison.Ordinal);
        Assert.Contains("Storage:TimeSeries:FlushInterval", result.FailureMessage, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("00:00:00", "00:00:01", true)]
    [InlineData("01:00:00", "00:00:01", true)]
    [InlineData("00:06:00", "00:00:00.1", true)]   // 3600 intervals
    [InlineData("-00:00:01", "00:00:01", false)]
    [InlineData("01:00:01", "00:00:01", false)]
    [InlineData("00:10:00", "00:00:00.1", false)]  // 6000 intervals
    public void ALateMergeWindowIsValidFromZeroToAnHourWithinTheIntervalBoundAndOtherwiseNamedWithItsValue(string window, string interval, bool valid)
    {
        var options = new StorageOptions();
        var rule = options.Downsampling[Measurements.Sensor];
        rule.LateMergeWindow = TimeSpan.Parse(window, System.Globalization.CultureInfo.InvariantCulture);
        rule.Interval = TimeSpan.Parse(interval, System.Globalization.CultureInfo.InvariantCulture);

        var result = new StorageOptionsValidator().Validate(null, options);

        Assert.Equal(valid, result.Succeeded);
        if (!valid)
        {
            Assert.Contains($"Storage:Downsampling:sensor:LateMergeWindow = '{rule.LateMergeWindow}'", result.FailureMessage, StringComparison.Ordinal);
        }
    }

    [Fact]
    public void TheTokenComesFromTheEnvironmentFirstThenFromTheFirstLineOfTheTokenFile()
    {
        using var dir = new TempDirectory();
        var file = dir.File("token");
        File.WriteAllText(file, "from-file-token\nsecond line\n");
        var options = new TimeSeriesOptions { TokenFile = file };

        Assert.Equal("from-env", TokenSource.Resolve(options, name => name == StorageOptions.TokenEnvironmentVariable ? " from-env " : null));
        Assert.Equal("from-file-token", TokenSource.Resolve(options, _ => null));
        Assert.Equal("", TokenSource.Resolve(new TimeSeriesOptions(), _ => null));
    }

    [Fact]
    public void AnUnreadableTokenFileIsNamedButItsContentNeverAppears()
    {
        var options = new TimeSeriesOptions { TokenFile = "/nonexistent/silowatch-token" };

        var ex = Assert.Throws<InvalidOperationException>(() => TokenSource.Resolve(options, _ => null));

        Assert.Contains("/nonexistent/silowatch-token", ex.Message, StringComparison.Ordinal);
    }
}
