using InfluxDB.Client;
using InfluxDB.Client.Api.Domain;
using InfluxDB.Client.Core.Exceptions;
using Microsoft.Extensions.Logging;
using Polly;
using Polly.Retry;

namespace SiloWatch.Storage;

/// <summary>
/// Writes points to a store that takes the InfluxDB v2 write API (InfluxDB 2/3, VictoriaMetrics)
/// through InfluxDB.Client, as line protocol with millisecond timestamps.
/// <para>
/// Path of a point: <see cref="Write"/> copies it into a bounded in-memory buffer; one background
/// writer formats full batches (or partial ones every FlushInterval) and sends them, retrying
/// transient failures with exponential backoff and jitter (Polly). A batch that still fails goes
/// to the disk spool, and so does every later batch until the spool is drained again, which keeps
/// the replay in arrival order. While the store is down it is probed with one chunk of the
/// spool at growing intervals (up to Retry:MaxDelay). A non-empty spool found at start-up (after a
/// restart or a kill) is replayed the same way.
/// </para>
/// <para>
/// Buffer full: the thread calling Write appends the overflowing batch to the spool itself (local
/// disk, no network) and it is replayed from there. Spool full: the oldest spooled points are
/// discarded, counted in <see cref="StorageHealth.DiscardedPoints"/> and logged as errors;
/// <see cref="StorageHealth.SpoolNearlyFull"/> is raised well before that.
/// </para>
/// </summary>
public sealed partial class InfluxTimeSeriesSink : ITimeSeriesSink
{
    private readonly TimeSeriesOptions _options;
    private readonly TimeProvider _timeProvider;
    private readonly ILogger _logger;
    private readonly InfluxDBClient _client;
    private readonly WriteApiAsync _writeApi;
    private readonly ResiliencePipeline _retry;
    private readonly BufferedSinkFront _front;
    private readonly DiskSpool _spool;
    private readonly TextBuffer _format = new(64 * 1024);
    private readonly CancellationTokenSource _hardStop = new();
    private readonly Task _writer;
    private volatile bool _stopping;
    private volatile bool _reachable = true;
    private int _probeFailures;
    private DateTimeOffset _nextProbeUtc;
    private int _spoolAlarm;
    private long _spooled;
    private long _replayed;
    private long _rejected;
    private long _lost;
    private readonly string _displayUrl;

    /// <param name="token">The API token; null reads it through <see cref="TokenSource"/>.</param>
    public InfluxTimeSeriesSink(TimeSeriesOptions options, TimeProvider timeProvider, ILogger<InfluxTimeSeriesSink> logger, string? token = null)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(timeProvider);
        ArgumentNullException.ThrowIfNull(logger);
        if (string.IsNullOrWhiteSpace(options.Url))
        {
            throw new ArgumentException("Storage:TimeSeries:Url is empty: use the embedded store instead", nameof(options));
        }

        _options = options;
        _timeProvider = timeProvider;
        _logger = logger;
        token ??= TokenSource.Resolve(options);

        var clientOptions = new InfluxDBClientOptions(options.Url)
        {
            Org = options.Org,
            Bucket = options.Bucket,
            Timeout = options.RequestTimeout,
        };
        if (token.Length > 0)
        {
            clientOptions.Token = token;
        }

        _client = new InfluxDBClient(clientOptions);
        _writeApi = _client.GetWriteApiAsync();

        var builder = new ResiliencePipelineBuilder { TimeProvider = timeProvider };
        if (options.Retry.MaxAttempts > 0)
        {
            builder.AddRetry(new RetryStrategyOptions
            {
                MaxRetryAttempts = options.Retry.MaxAttempts,
                BackoffType = DelayBackoffType.Exponential,
                UseJitter = true,
                Delay = options.Retry.BaseDelay,
                MaxDelay = options.Retry.MaxDelay,
                ShouldHandle = new PredicateBuilder().Handle<Exception>(IsTransient),
                OnRetry = args =>
                {
                    LogRetry(_logger, args.AttemptNumber + 1, args.RetryDelay, Describe(args.Outcome.Exception));
                    return default;
                },
            });
        }

        _retry = builder.Build();
        _spool = new DiskSpool(options.SpoolDirectory, options.SpoolMaxBytes, logger);
        _front = new BufferedSinkFront(options, timeProvider, SpillToSpool);
        UpdateSpoolAlarm();
        _displayUrl = new Uri(options.Url).GetComponents(UriComponents.SchemeAndServer | UriComponents.Path, UriFormat.UriEscaped);
        LogStarted(_logger, _displayUrl, options.Bucket, _spool.DirectoryPath);
        _writer = Task.Run(RunAsync);
    }

    public StorageHealth Health => _front.Health("influx", _reachable) with
    {
        SpooledPoints = Interlocked.Read(ref _spooled),
        ReplayedPoints = Interlocked.Read(ref _replayed),
        SpoolBytes = _spool.Bytes,
        SpoolMaxBytes = _spool.MaxBytes,
        SpoolNearlyFull = Volatile.Read(ref _spoolAlarm) == 1,
        DiscardedPoints = _spool.DiscardedPoints + Interlocked.Read(ref _lost),
        RejectedPoints = Interlocked.Read(ref _rejected),
    };

    /// <summary>True when the spool holds points not yet replayed.</summary>
    public bool HasSpooledPoints => !_spool.IsEmpty;

    public void Write(SeriesKey series, long timestampMs, ReadOnlySpan<double> values) => _front.Write(series, timestampMs, values);

    public Task FlushAsync(CancellationToken ct) => _front.FlushAsync(ct);

    /// <summary>
    /// Stops: what is buffered is sent once (no retries) or else spooled; the spool is left for the
    /// next start. Waits at most RequestTimeout plus 5 s for the writer before cancelling it.
    /// </summary>
    public async ValueTask DisposeAsync()
    {
        if (_stopping)
        {
            return;
        }

        _stopping = true;
        _front.Complete();
        try
        {
            await _writer.WaitAsync(_options.RequestTimeout + TimeSpan.FromSeconds(5), _timeProvider).ConfigureAwait(false);
        }
        catch (TimeoutException)
        {
            await _hardStop.CancelAsync().ConfigureAwait(false);
            await _writer.ConfigureAwait(false);
        }

        _spool.Dispose();
        _client.Dispose();
        _hardStop.Dispose();
        _front.Dispose();
    }

    private async Task RunAsync()
    {
        var reader = _front.Reader;
        while (true)
        {
            while (reader.TryRead(out var item))
            {
                try
                {
                    await _front.HandleAsync(item, SendOrSpoolAsync).ConfigureAwait(false);
                }
                catch (Exception ex)
                {
                    // A bug must not stop the writer: later batches and flushes still need it.
                    _front.LastError = Describe(ex);
                    LogWriterFailed(_logger, ex);
                }
            }

            if (reader.Completion.IsCompleted)
            {
                return;
            }

            if (!_stopping && !_spool.IsEmpty && _timeProvider.GetUtcNow() >= _nextProbeUtc)
            {
                await ReplayOneChunkAsync().ConfigureAwait(false);
                continue;
            }

            var wait = _spool.IsEmpty || _stopping ? Timeout.InfiniteTimeSpan : _nextProbeUtc - _timeProvider.GetUtcNow();
            if (wait != Timeout.InfiniteTimeSpan && wait <= TimeSpan.Zero)
            {
                continue;
            }

            using var timeout = wait == Timeout.InfiniteTimeSpan ? null : new CancellationTokenSource(wait, _timeProvider);
            try
            {
                await reader.WaitToReadAsync(timeout?.Token ?? CancellationToken.None).ConfigureAwait(false);
            }
            catch (OperationCanceledException)
            {
                // time to probe the store again
            }
        }
    }

    private async Task SendOrSpoolAsync(PointBatch batch)
    {
        try
        {
            var lines = batch.Format(_format, out var skipped);
            _front.Skipped(skipped);
            if (lines == 0)
            {
                return;
            }

            if (!_reachable || !_spool.IsEmpty)
            {
                Spool(_format.Span, lines);
                return;
            }

            var text = _format.ToString();
            switch (await SendAsync(text, withRetry: !_stopping).ConfigureAwait(false))
            {
                case SendOutcome.Stored:
                    _front.Stored(lines);
                    break;
                case SendOutcome.Rejected:
                    Reject(text, lines);
                    break;
                default:
                    Spool(text, lines);
                    MarkUnreachable();
                    break;
            }
        }
        catch (Exception ex) when (ex is IOException or UnauthorizedAccessException)
        {
            // The spool itself failed (disk full, permissions): nothing else can hold these points.
            _front.LastError = Describe(ex);
            Interlocked.Add(ref _lost, batch.Count);
            LogSpoolFailed(_logger, batch.Count, ex);
        }
    }

    private async Task ReplayOneChunkAsync()
    {
        SpoolChunk chunk;
        try
        {
            if (!_spool.TryReadChunk(_options.BatchSize, out chunk))
            {
                return;
            }
        }
        catch (IOException ex)
        {
            // Not the store's fault, but waiting the probe interval keeps a failing disk from spinning this loop.
            _front.LastError = Describe(ex);
            LogSpoolReadFailed(_logger, ex);
            MarkUnreachable();
            return;
        }

        // A probe is one attempt: while the store is down its pace is set by the probe backoff.
        switch (await SendAsync(chunk.Text, withRetry: _reachable).ConfigureAwait(false))
        {
            case SendOutcome.Stored:
                _spool.Commit(chunk);
                _front.Stored(chunk.Lines);
                Interlocked.Add(ref _replayed, chunk.Lines);
                MarkReachable();
                break;
            case SendOutcome.Rejected:
                Reject(chunk.Text, chunk.Lines);
                _spool.Commit(chunk);
                MarkReachable();
                break;
            default:
                MarkUnreachable();
                break;
        }

        UpdateSpoolAlarm();
    }

    private async Task<SendOutcome> SendAsync(string text, bool withRetry)
    {
        try
        {
            if (withRetry)
            {
                await _retry.ExecuteAsync(
                    static async (state, ct) => await state.Api.WriteRecordAsync(state.Text, WritePrecision.Ms, state.Bucket, state.Org, ct).ConfigureAwait(false),
                    (Api: _writeApi, Text: text, _options.Bucket, _options.Org),
                    _hardStop.Token).ConfigureAwait(false);
            }
            else
            {
                await _writeApi.WriteRecordAsync(text, WritePrecision.Ms, _options.Bucket, _options.Org, _hardStop.Token).ConfigureAwait(false);
            }

            return SendOutcome.Stored;
        }
        catch (Exception ex) when (IsRejected(ex))
        {
            _front.LastError = Describe(ex);
            return SendOutcome.Rejected;
        }
        catch (Exception ex)
        {
            _front.LastError = Describe(ex);
            if (_reachable)
            {
                LogWriteFailed(_logger, Describe(ex));
            }

            return SendOutcome.Unavailable;
        }
    }

    private void Spool(ReadOnlySpan<char> text, int lines)
    {
        _spool.Append(text, lines);
        Interlocked.Add(ref _spooled, lines);
        UpdateSpoolAlarm();
    }

    private void Reject(string text, int lines)
    {
        Interlocked.Add(ref _rejected, lines);
        LogRejected(_logger, lines, _front.LastError ?? "");
        _spool.AppendRejected(text);
    }

    /// <summary>Overflow from a Write caller: the buffer is full, so this thread writes the batch to the spool.</summary>
    private void SpillToSpool(PointBatch batch)
    {
        var text = new TextBuffer(batch.Count * 96);
        var lines = batch.Format(text, out var skipped);
        _front.Skipped(skipped);
        try
        {
            Spool(text.Span, lines);
        }
        catch (Exception ex) when (ex is IOException or UnauthorizedAccessException)
        {
            _front.LastError = Describe(ex);
            Interlocked.Add(ref _lost, lines);
            LogSpoolFailed(_logger, lines, ex);
        }
    }

    private void MarkUnreachable()
    {
        if (_reachable)
        {
            _reachable = false;
            LogUnreachable(_logger, _displayUrl, _front.LastError ?? "");
        }

        // Probe backoff: doubling from BaseDelay up to MaxDelay, with +-20 % jitter so that many
        // instances do not hit a recovering store at the same instant.
        var failures = Math.Min(++_probeFailures, 30);
        var delayMs = Math.Min(_options.Retry.MaxDelay.TotalMilliseconds, _options.Retry.BaseDelay.TotalMilliseconds * Math.Pow(2, failures - 1));
        delayMs *= 0.8 + (0.4 * Random.Shared.NextDouble());
        _nextProbeUtc = _timeProvider.GetUtcNow() + TimeSpan.FromMilliseconds(delayMs);
    }

    private void MarkReachable()
    {
        _probeFailures = 0;
        _nextProbeUtc = DateTimeOffset.MinValue;
        if (!_reachable)
        {
            _reachable = true;
            _front.LastError = null;
            LogReachable(_logger, _displayUrl, _spool.Bytes);
        }
    }

    private void UpdateSpoolAlarm()
    {
        var nearlyFull = _spool.Bytes * 100 >= _spool.MaxBytes * _options.SpoolAlarmPercent ? 1 : 0;
        if (Interlocked.Exchange(ref _spoolAlarm, nearlyFull) != nearlyFull)
        {
            if (nearlyFull == 1)
            {
                LogSpoolNearlyFull(_logger, _spool.Bytes, _spool.MaxBytes, _options.SpoolAlarmPercent);
            }
            else
            {
                LogSpoolRelieved(_logger, _spool.Bytes, _spool.MaxBytes);
            }
        }
    }

    /// <summary>400, 413 and 422: the store read the request and refused it; resending cannot help.</summary>
    private static bool IsRejected(Exception ex) => ex is InfluxException { Status: 400 or 413 or 422 };

    /// <summary>Worth retrying at once: anything but a refusal or a configuration error (401, 403, 404), which wait for the probe.</summary>
    private bool IsTransient(Exception ex) =>
        !IsRejected(ex)
        && ex is not InfluxException { Status: 401 or 403 or 404 }
        && !(ex is OperationCanceledException && _hardStop.IsCancellationRequested);

    private static string Describe(Exception? ex) => ex switch
    {
        null => "",
        InfluxException { Status: > 0 } ie => $"HTTP {ie.Status}: {ie.Message}",
        _ => ex.GetType().Name + ": " + (ex.InnerException?.Message ?? ex.Message),
    };

    private enum SendOutcome
    {
        Stored,
        Rejected,
        Unavailable,
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Time-series store {Url}, bucket {Bucket}; spool in {SpoolDirectory}")]
    private static partial void LogStarted(ILogger logger, string url, string bucket, string spoolDirectory);

    [LoggerMessage(Level = LogLevel.Debug, Message = "Time-series write failed, retry {Attempt} in {Delay}: {Error}")]
    private static partial void LogRetry(ILogger logger, int attempt, TimeSpan delay, string error);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Time-series write failed: {Error}")]
    private static partial void LogWriteFailed(ILogger logger, string error);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Time-series store {Url} unreachable ({Error}): spooling points to disk")]
    private static partial void LogUnreachable(ILogger logger, string url, string error);

    [LoggerMessage(Level = LogLevel.Information, Message = "Time-series store {Url} reachable again; {SpoolBytes} spooled bytes to replay")]
    private static partial void LogReachable(ILogger logger, string url, long spoolBytes);

    [LoggerMessage(Level = LogLevel.Error, Message = "Time-series store refused {Points} points as malformed ({Error}); kept in the spool's rejected file")]
    private static partial void LogRejected(ILogger logger, int points, string error);

    [LoggerMessage(Level = LogLevel.Error, Message = "Time-series spool write failed; {Points} points lost")]
    private static partial void LogSpoolFailed(ILogger logger, int points, Exception exception);

    [LoggerMessage(Level = LogLevel.Error, Message = "Time-series writer failed on one batch; it carries on")]
    private static partial void LogWriterFailed(ILogger logger, Exception exception);

    [LoggerMessage(Level = LogLevel.Error, Message = "Time-series spool could not be read for replay")]
    private static partial void LogSpoolReadFailed(ILogger logger, Exception exception);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Time-series spool nearly full: {Bytes} of {MaxBytes} bytes (alarm at {Percent} %)")]
    private static partial void LogSpoolNearlyFull(ILogger logger, long bytes, long maxBytes, int percent);

    [LoggerMessage(Level = LogLevel.Information, Message = "Time-series spool below its alarm level again: {Bytes} of {MaxBytes} bytes")]
    private static partial void LogSpoolRelieved(ILogger logger, long bytes, long maxBytes);
}
