using System.Buffers;
using System.Globalization;
using System.Text;
using Microsoft.Extensions.Logging;

namespace SiloWatch.Storage;

/// <summary>A run of spooled lines read for replay; committed once the store acknowledged it.</summary>
internal sealed record SpoolChunk(long Segment, long EndOffset, int Lines, string Text);

/// <summary>
/// The outage spool: line protocol appended to numbered segment files ("seg-000000000001.lp"),
/// replayed oldest first. The replay position lives in "replay.pos" and is advanced only after the
/// store acknowledged a chunk, so a restart (even after kill -9) resends at most the one chunk that
/// was in flight, with identical series and timestamps. Bounded: when an append would exceed
/// the maximum, the oldest segment is discarded, its points counted and logged as an error.
/// </summary>
internal sealed partial class DiskSpool : IDisposable
{
    private const string SegmentPrefix = "seg-";
    private const string SegmentExtension = ".lp";
    private const string PositionFileName = "replay.pos";
    private const string RejectedFileName = "rejected.lp";
    private const string LockFileName = ".lock";

    private readonly Lock _lock = new();
    private readonly string _directory;
    private readonly long _maxBytes;
    private readonly long _segmentBytes;
    private readonly ILogger _logger;
    private readonly List<long> _segments = [];
    private long _headOffset;
    private long _fileBytes;
    private FileStream? _tail;
    private long _tailSegment = -1;
    private byte[]? _headCache;
    private long _headCacheSegment = -1;
    private long _discardedPoints;
    private readonly FileStream _directoryLock;

    public DiskSpool(string directory, long maxBytes, ILogger logger)
    {
        _directory = Path.GetFullPath(directory);
        _maxBytes = maxBytes;
        _segmentBytes = Math.Clamp(maxBytes / 16, 4 * 1024, 16 * 1024 * 1024);
        _logger = logger;
        System.IO.Directory.CreateDirectory(_directory);
        try
        {
            // Two writers on one spool would interleave and replay each other's points: refuse the second.
            _directoryLock = new FileStream(Path.Combine(_directory, LockFileName), FileMode.OpenOrCreate, FileAccess.ReadWrite, FileShare.None);
        }
        catch (IOException ex)
        {
            throw new InvalidOperationException(
                $"Storage:TimeSeries:SpoolDirectory = '{_directory}': in use by another SiloWatch process; give each instance its own spool", ex);
        }

        try
        {
            Recover();
        }
        catch
        {
            _directoryLock.Dispose();
            throw;
        }
    }

    /// <summary>Bytes the spool occupies on disk (never above the maximum).</summary>
    public long Bytes
    {
        get
        {
            lock (_lock)
            {
                return _fileBytes;
            }
        }
    }

    public long MaxBytes => _maxBytes;

    public bool IsEmpty
    {
        get
        {
            lock (_lock)
            {
                return _fileBytes - _headOffset <= 0;
            }
        }
    }

    public long DiscardedPoints => Interlocked.Read(ref _discardedPoints);

    public string DirectoryPath => _directory;

    /// <summary>Appends lines (joined by '\n', no trailing newline) and makes them durable.</summary>
    public void Append(ReadOnlySpan<char> text, int lines)
    {
        if (lines == 0)
        {
            return;
        }

        var byteCount = Encoding.UTF8.GetByteCount(text) + 1;
        var bytes = ArrayPool<byte>.Shared.Rent(byteCount);
        try
        {
            Encoding.UTF8.GetBytes(text, bytes);
            bytes[byteCount - 1] = (byte)'\n';
            lock (_lock)
            {
                if (byteCount > _maxBytes)
                {
                    Interlocked.Add(ref _discardedPoints, lines);
                    LogDiscarded(_logger, lines, "a single batch is larger than SpoolMaxBytes", _maxBytes);
                    return;
                }

                while (_fileBytes + byteCount > _maxBytes && _segments.Count > 0)
                {
                    DiscardOldestLocked();
                }

                var tail = TailFor(byteCount);
                tail.Write(bytes, 0, byteCount);
                // Durable before Append returns: FlushAsync promises "stored or on disk".
                tail.Flush(flushToDisk: true);
                _fileBytes += byteCount;
            }
        }
        finally
        {
            ArrayPool<byte>.Shared.Return(bytes);
        }
    }

    /// <summary>Reads up to <paramref name="maxLines"/> of the oldest unsent lines.</summary>
    public bool TryReadChunk(int maxLines, out SpoolChunk chunk)
    {
        lock (_lock)
        {
            while (_segments.Count > 0)
            {
                var segment = _segments[0];
                if (_tail is not null && _tailSegment == segment)
                {
                    // The head is being replayed: later appends go to a new segment, so the head stops changing.
                    CloseTailLocked();
                }

                if (_headCacheSegment != segment)
                {
                    _headCache = File.ReadAllBytes(SegmentPath(segment));
                    _headCacheSegment = segment;
                }

                var bytes = _headCache!;
                var start = (int)_headOffset;
                if (start >= bytes.Length)
                {
                    DeleteHeadLocked();
                    continue;
                }

                var end = start;
                var lines = 0;
                while (lines < maxLines && end < bytes.Length)
                {
                    var nl = bytes.AsSpan(end).IndexOf((byte)'\n');
                    end = nl < 0 ? bytes.Length : end + nl + 1;
                    lines++;
                }

                var textEnd = bytes[end - 1] == (byte)'\n' ? end - 1 : end;
                chunk = new SpoolChunk(segment, end, lines, Encoding.UTF8.GetString(bytes, start, textEnd - start));
                return true;
            }

            chunk = null!;
            return false;
        }
    }

    /// <summary>Marks a chunk as stored: the replay position moves past it, a finished segment is deleted.</summary>
    public void Commit(SpoolChunk chunk)
    {
        lock (_lock)
        {
            if (_segments.Count == 0 || _segments[0] != chunk.Segment)
            {
                return; // discarded while it was in flight
            }

            _headOffset = chunk.EndOffset;
            if (_headCache is not null && _headOffset >= _headCache.Length)
            {
                DeleteHeadLocked();
            }
            else
            {
                WritePositionLocked();
            }
        }
    }

    /// <summary>Keeps lines the store refused as malformed, for inspection; they are not replayed.</summary>
    public void AppendRejected(string text)
    {
        lock (_lock)
        {
            File.AppendAllText(Path.Combine(_directory, RejectedFileName), text + "\n");
        }
    }

    public void Dispose()
    {
        lock (_lock)
        {
            CloseTailLocked();
            _directoryLock.Dispose();
        }
    }

    private void Recover()
    {
        foreach (var path in System.IO.Directory.EnumerateFiles(_directory, SegmentPrefix + "*" + SegmentExtension))
        {
            var name = Path.GetFileNameWithoutExtension(path);
            if (long.TryParse(name.AsSpan(SegmentPrefix.Length), NumberStyles.None, CultureInfo.InvariantCulture, out var n))
            {
                _segments.Add(n);
            }
        }

        _segments.Sort();
        var positionPath = Path.Combine(_directory, PositionFileName);
        if (_segments.Count > 0 && File.Exists(positionPath))
        {
            var parts = File.ReadAllText(positionPath).Split(' ', StringSplitOptions.RemoveEmptyEntries);
            if (parts.Length == 2
                && long.TryParse(parts[0], CultureInfo.InvariantCulture, out var segment)
                && long.TryParse(parts[1], CultureInfo.InvariantCulture, out var offset))
            {
                // Segments before the recorded one were sent in full; a crash came before their deletion.
                while (_segments.Count > 0 && _segments[0] < segment)
                {
                    File.Delete(SegmentPath(_segments[0]));
                    _segments.RemoveAt(0);
                }

                if (_segments.Count > 0 && _segments[0] == segment)
                {
                    _headOffset = Math.Clamp(offset, 0, new FileInfo(SegmentPath(segment)).Length);
                }
            }
        }

        if (_segments.Count > 0)
        {
            RepairTornTail(SegmentPath(_segments[^1]));
        }

        foreach (var segment in _segments)
        {
            _fileBytes += new FileInfo(SegmentPath(segment)).Length;
        }

        if (_fileBytes - _headOffset > 0)
        {
            LogResumed(_logger, _segments.Count, _fileBytes - _headOffset, _directory);
        }
    }

    /// <summary>A kill during an append can leave half a line at the end: cut it off.</summary>
    private void RepairTornTail(string path)
    {
        using var stream = new FileStream(path, FileMode.Open, FileAccess.ReadWrite);
        if (stream.Length == 0)
        {
            return;
        }

        var length = stream.Length;
        var buffer = new byte[4096];
        var pos = length;
        stream.Position = length - 1;
        if (stream.ReadByte() == '\n')
        {
            return;
        }

        while (pos > 0)
        {
            var read = (int)Math.Min(buffer.Length, pos);
            stream.Position = pos - read;
            stream.ReadExactly(buffer, 0, read);
            var nl = buffer.AsSpan(0, read).LastIndexOf((byte)'\n');
            if (nl >= 0)
            {
                pos = pos - read + nl + 1;
                break;
            }

            pos -= read;
        }

        LogTornTail(_logger, path, length - pos);
        stream.SetLength(pos);
    }

    private FileStream TailFor(int byteCount)
    {
        if (_tail is not null && _tail.Length > 0 && _tail.Length + byteCount > _segmentBytes)
        {
            CloseTailLocked();
        }

        if (_tail is null)
        {
            var segment = _segments.Count == 0 ? NextSegmentAfterPosition() : _segments[^1] + 1;
            _tail = new FileStream(SegmentPath(segment), FileMode.CreateNew, FileAccess.Write, FileShare.Read, 1, FileOptions.None);
            _tailSegment = segment;
            _segments.Add(segment);
        }

        return _tail;
    }

    private long NextSegmentAfterPosition()
    {
        // Numbers keep growing across an emptied spool, so a stale replay.pos never matches a new segment.
        var positionPath = Path.Combine(_directory, PositionFileName);
        if (File.Exists(positionPath))
        {
            var parts = File.ReadAllText(positionPath).Split(' ', StringSplitOptions.RemoveEmptyEntries);
            if (parts.Length == 2 && long.TryParse(parts[0], CultureInfo.InvariantCulture, out var segment))
            {
                return segment + 1;
            }
        }

        return 1;
    }

    private void CloseTailLocked()
    {
        _tail?.Dispose();
        _tail = null;
        _tailSegment = -1;
    }

    private void DiscardOldestLocked()
    {
        var segment = _segments[0];
        if (_tailSegment == segment)
        {
            CloseTailLocked();
        }

        var path = SegmentPath(segment);
        var bytes = _headCacheSegment == segment ? _headCache! : File.ReadAllBytes(path);
        var lines = bytes.AsSpan((int)Math.Min(_headOffset, bytes.Length)).Count((byte)'\n');
        Interlocked.Add(ref _discardedPoints, lines);
        LogDiscarded(_logger, lines, "the spool is full (oldest points go first)", _maxBytes);
        DeleteHeadLocked();
    }

    private void DeleteHeadLocked()
    {
        var segment = _segments[0];
        if (_tailSegment == segment)
        {
            CloseTailLocked();
        }

        var path = SegmentPath(segment);
        _fileBytes -= new FileInfo(path).Length;
        File.Delete(path);
        _segments.RemoveAt(0);
        _headOffset = 0;
        _headCache = null;
        _headCacheSegment = -1;
        // Record the next segment before anything else, so a restart never resends a deleted one's neighbour twice.
        WritePositionLocked(segment + 1);
    }

    private void WritePositionLocked(long? segment = null)
    {
        var s = segment ?? _segments[0];
        var offset = segment is null ? _headOffset : 0;
        var positionPath = Path.Combine(_directory, PositionFileName);
        var temporary = positionPath + ".tmp";
        File.WriteAllText(temporary, string.Create(CultureInfo.InvariantCulture, $"{s} {offset}"));
        File.Move(temporary, positionPath, overwrite: true);
    }

    private string SegmentPath(long segment) =>
        Path.Combine(_directory, string.Create(CultureInfo.InvariantCulture, $"{SegmentPrefix}{segment:D12}{SegmentExtension}"));

    [LoggerMessage(Level = LogLevel.Error, Message = "Time-series spool: discarded {Points} points because {Reason} (SpoolMaxBytes {MaxBytes})")]
    private static partial void LogDiscarded(ILogger logger, long points, string reason, long maxBytes);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Time-series spool: cut {Bytes} bytes of a torn last line in {Path}")]
    private static partial void LogTornTail(ILogger logger, string path, long bytes);

    [LoggerMessage(Level = LogLevel.Information, Message = "Time-series spool: resuming {Segments} segments, {Bytes} bytes to replay, from {Directory}")]
    private static partial void LogResumed(ILogger logger, int segments, long bytes, string directory);
}
