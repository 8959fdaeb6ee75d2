using Microsoft.Extensions.Logging;
using SiloWatch.Storage.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Storage.Tests;

/// <summary>How the InfluxDB sink treats each kind of answer, against a scripted stand-in for the write endpoint.</summary>
public sealed class InfluxResponseHandlingTests(ITestOutputHelper output) : IDisposable
{
    private static readonly TimeSpan Generous = TimeSpan.FromSeconds(60);
    private readonly TempDirectory _dir = new();
    private readonly TestLogger<InfluxTimeSeriesSink> _log = new(output);

    public void Dispose() => _dir.Dispose();

    private InfluxTimeSeriesSink Sink(ScriptedStore store, string token = "")
    {
        var options = Some.FastOptions(store.Url, _dir.File("spool"));
        options.Retry.MaxAttempts = 2;
        return new InfluxTimeSeriesSink(options, TimeProvider.System, _log, token);
    }

    private static void WritePoints(ITimeSeriesSink sink, int count)
    {
        var series = Some.SensorSeries("scripted");
        for (var i = 0; i < count; i++)
        {
            sink.Write(series, 1_700_000_000_000 + i, [i, i * 2, 0]);
        }
    }

    [Fact]
    public async Task RequestsUseTheV2WritePathWithMillisecondPrecisionBucketOrgAndTheToken()
    {
        using var store = new ScriptedStore();
        await using (var sink = Sink(store, token: "abc-secret-token"))
        {
            WritePoints(sink, 3);
            await sink.FlushAsync(CancellationToken.None);
        }

        var request = Assert.Single(store.Requests);
        Assert.StartsWith("/api/v2/write?", request.PathAndQuery, StringComparison.Ordinal);
        Assert.Contains("precision=ms", request.PathAndQuery, StringComparison.Ordinal);
        Assert.Contains("bucket=test-bucket", request.PathAndQuery, StringComparison.Ordinal);
        Assert.Contains("org=test-org", request.PathAndQuery, StringComparison.Ordinal);
        Assert.Equal("Token abc-secret-token", request.Authorization);
        Assert.Equal(3, request.Body.Split('\n', StringSplitOptions.RemoveEmptyEntries).Length);
        Assert.DoesNotContain(_log.Entries, e => e.Message.Contains("abc-secret-token", StringComparison.Ordinal));
    }

    [Fact]
    public async Task ATransientServerErrorIsRetriedWithTheSameLinesAndNothingIsSpooled()
    {
        using var store = new ScriptedStore(503, 500);
        await using var sink = Sink(store);
        WritePoints(sink, 10);
        await sink.FlushAsync(CancellationToken.None);

        Assert.Equal(10, sink.Health.WrittenPoints);
        Assert.Equal(0, sink.Health.SpooledPoints);
        Assert.True(sink.Health.StoreReachable);
        var requests = store.Requests.ToArray();
        Assert.Equal([503, 500, 204], requests.Select(r => r.Status));
        Assert.All(requests, r => Assert.Equal(requests[0].Body, r.Body));
    }

    [Fact]
    public async Task ContentTheStoreRefusesIsSetAsideInTheRejectedFileAndNotSentAgain()
    {
        using var store = new ScriptedStore(400);
        await using var sink = Sink(store);
        WritePoints(sink, 10);
        await sink.FlushAsync(CancellationToken.None);

        var health = sink.Health;
        Assert.Equal(10, health.RejectedPoints);
        Assert.Equal(0, health.SpooledPoints);
        Assert.True(health.StoreReachable);
        Assert.Single(store.Requests);
        var rejected = File.ReadAllLines(Path.Combine(_dir.File("spool"), "rejected.lp"));
        Assert.Equal(10, rejected.Length);
        Assert.True(_log.Logged(LogLevel.Error, "refused 10 points"));

        WritePoints(sink, 5);
        await sink.FlushAsync(CancellationToken.None);
        Assert.Equal(5, sink.Health.WrittenPoints);
    }

    [Fact]
    public async Task AnAuthorizationErrorIsNotRetriedAtOnceButSpooledAndReplayedWhenTheStoreAcceptsAgain()
    {
        using var store = new ScriptedStore(401);
        await using var sink = Sink(store);
        WritePoints(sink, 10);
        await sink.FlushAsync(CancellationToken.None);

        Assert.Equal(10, sink.Health.SpooledPoints);
        Assert.Single(store.Requests); // no immediate retries of a refused token
        Assert.True(await Some.EventuallyAsync(() => !sink.HasSpooledPoints && sink.Health.StoreReachable, Generous), "the spool was not replayed");

        var requests = store.Requests.ToArray();
        Assert.Equal([401, 204], requests.Select(r => r.Status));
        Assert.Equal(requests[0].Body, requests[1].Body); // the replay is the same series and timestamps
        Assert.Equal(10, sink.Health.ReplayedPoints);
    }
}
