using System.Text;
using SiloWatch.Storage.Tests.Support;

namespace SiloWatch.Storage.Tests;

public sealed class DiskSpoolTests : IDisposable
{
    private readonly TempDirectory _dir = new();
    private readonly TestLogger<DiskSpoolTests> _log = new();

    public void Dispose() => _dir.Dispose();

    private static string Lines(int from, int count) =>
        string.Join('\n', Enumerable.Range(from, count).Select(i => $"m,k=v f={i} {1_700_000_000_000L + i}"));

    private static List<string> ReadAll(DiskSpool spool, int maxLines = 7)
    {
        var lines = new List<string>();
        while (spool.TryReadChunk(maxLines, out var chunk))
        {
            lines.AddRange(chunk.Text.Split('\n'));
            Assert.Equal(chunk.Lines, chunk.Text.Split('\n').Length);
            spool.Commit(chunk);
        }

        return lines;
    }

    [Fact]
    public void LinesComeBackInTheOrderTheyWereAppendedInChunksOfAtMostTheAskedSize()
    {
        using var spool = new DiskSpool(_dir.Path, 1 << 20, _log);
        spool.Append(Lines(0, 10), 10);
        spool.Append(Lines(10, 5), 5);

        Assert.True(spool.TryReadChunk(7, out var chunk));
        Assert.Equal(7, chunk.Lines);
        spool.Commit(chunk);
        var rest = ReadAll(spool);

        Assert.Equal(Lines(7, 8).Split('\n'), rest);
        Assert.True(spool.IsEmpty);
        Assert.Equal(0, spool.Bytes);
    }

    [Fact]
    public void AReopenedSpoolResumesAfterTheLastCommittedChunk()
    {
        using (var spool = new DiskSpool(_dir.Path, 1 << 20, _log))
        {
            spool.Append(Lines(0, 20), 20);
            Assert.True(spool.TryReadChunk(6, out var chunk));
            spool.Commit(chunk);
            Assert.True(spool.TryReadChunk(6, out _)); // read, never committed: in flight at the crash
        }

        using var reopened = new DiskSpool(_dir.Path, 1 << 20, _log);
        Assert.Equal(Lines(6, 14).Split('\n'), ReadAll(reopened));
    }

    [Fact]
    public void AHalfWrittenLastLineIsCutOffOnReopen()
    {
        using (var spool = new DiskSpool(_dir.Path, 1 << 20, _log))
        {
            spool.Append(Lines(0, 3), 3);
        }

        var segment = Directory.GetFiles(_dir.Path, "seg-*.lp").Single();
        File.AppendAllText(segment, "m,k=v f=99 17000000", Encoding.UTF8); // torn by a kill

        using var reopened = new DiskSpool(_dir.Path, 1 << 20, _log);
        Assert.Equal(Lines(0, 3).Split('\n'), ReadAll(reopened));
        Assert.True(_log.Logged(Microsoft.Extensions.Logging.LogLevel.Warning, "torn"));
    }

    [Fact]
    public void AFullSpoolDiscardsItsOldestPointsCountsThemAndNeverGrowsBeyondItsBound()
    {
        const long max = StorageOptionsValidator.MinSpoolBytes;
        using var spool = new DiskSpool(_dir.Path, max, _log);
        var appended = 0;
        for (var block = 0; block < 60; block++)
        {
            spool.Append(Lines(appended, 50), 50); // about 1.7 KB a block, 100 KB in all
            appended += 50;
            Assert.True(spool.Bytes <= max, $"spool at {spool.Bytes} bytes exceeds {max}");
        }

        var kept = ReadAll(spool, 500);
        Assert.True(spool.DiscardedPoints > 0);
        Assert.Equal(appended, kept.Count + spool.DiscardedPoints);
        // What is kept is the newest, in order, ending with the last line written.
        Assert.Equal(Lines(appended - kept.Count, kept.Count).Split('\n'), kept);
        Assert.True(_log.Logged(Microsoft.Extensions.Logging.LogLevel.Error, "discarded"));
    }

    [Fact]
    public void ABatchLargerThanTheWholeSpoolIsCountedAsDiscarded()
    {
        using var spool = new DiskSpool(_dir.Path, StorageOptionsValidator.MinSpoolBytes, _log);
        spool.Append(Lines(0, 5000), 5000);

        Assert.Equal(5000, spool.DiscardedPoints);
        Assert.True(spool.IsEmpty);
    }

    [Fact]
    public void ASecondWriterOnTheSameSpoolDirectoryIsRefused()
    {
        using var first = new DiskSpool(_dir.Path, 1 << 20, _log);

        var ex = Assert.Throws<InvalidOperationException>(() => new DiskSpool(_dir.Path, 1 << 20, _log));

        Assert.Contains("SpoolDirectory", ex.Message, StringComparison.Ordinal);
    }
}
