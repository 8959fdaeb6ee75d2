using System.Text;

namespace SiloWatch.Messaging;

/// <summary>
/// Per-silo (pub, seq) tracking: for each publisher the highest seq seen and a 64-bit bitmap of
/// the 64 seqs at and below it (bit i = highest - i seen). Bounded: at most
/// <c>capacity</c> publishers, the least recently seen one is forgotten. Not thread-safe: one
/// instance per silo pipeline. Publisher names are matched as UTF-8 bytes, so a known
/// publisher costs no allocation.
/// </summary>
internal sealed class SequenceTracker(int capacity)
{
    public const int Window = 64;

    private readonly List<Entry> _entries = new(Math.Min(capacity, 8));
    private long _clock;

    public int Count => _entries.Count;

    /// <summary>Checks and records <paramref name="seq"/>; <paramref name="publisherName"/> is the publisher's string (for rejections).</summary>
    public SequenceStatus Track(ReadOnlySpan<byte> publisherUtf8, long seq, out long missing, out string publisherName)
    {
        missing = 0;
        _clock++;
        var entry = Find(publisherUtf8);
        if (entry is null)
        {
            entry = Add(publisherUtf8);
            entry.Highest = seq;
            entry.Seen = 1;
            entry.LastUse = _clock;
            publisherName = entry.Name;
            return SequenceStatus.First;
        }

        entry.LastUse = _clock;
        publisherName = entry.Name;
        if (seq > entry.Highest)
        {
            var step = seq - entry.Highest;
            entry.Seen = step >= Window ? 1UL : (entry.Seen << (int)step) | 1UL;
            entry.Highest = seq;
            missing = step - 1;
            return step == 1 ? SequenceStatus.InOrder : SequenceStatus.Gap;
        }

        var back = entry.Highest - seq;

        // seq 0 below the highest is a publisher that restarted (counters start at 0), even inside
        // the window; a redelivered seq 0 is then taken for a restart, which loses nothing.
        if (back >= Window || (seq == 0 && back > 0))
        {
            entry.Highest = seq;
            entry.Seen = 1;
            return SequenceStatus.Reset;
        }

        var bit = 1UL << (int)back;
        if ((entry.Seen & bit) != 0)
        {
            return SequenceStatus.Duplicate;
        }

        entry.Seen |= bit;
        return SequenceStatus.LateFill;
    }

    /// <summary>The position of every tracked publisher, for a snapshot.</summary>
    public IReadOnlyList<PublisherPosition> Capture() => [.. _entries.Select(e => new PublisherPosition(e.Name, e.Highest, e.Seen))];

    /// <summary>Replaces the tracked publishers with <paramref name="positions"/> (at most the capacity, the first ones kept).</summary>
    public void Restore(IEnumerable<PublisherPosition> positions)
    {
        _entries.Clear();
        foreach (var position in positions.Take(capacity))
        {
            _clock++;
            _entries.Add(new Entry
            {
                Utf8 = Encoding.UTF8.GetBytes(position.Publisher),
                Name = position.Publisher,
                Highest = position.Highest,
                Seen = position.Seen,
                LastUse = _clock,
            });
        }
    }

    private Entry? Find(ReadOnlySpan<byte> publisherUtf8)
    {
        foreach (var entry in _entries)
        {
            if (publisherUtf8.SequenceEqual(entry.Utf8))
            {
                return entry;
            }
        }

        return null;
    }

    private Entry Add(ReadOnlySpan<byte> publisherUtf8)
    {
        Entry entry;
        if (_entries.Count < capacity)
        {
            entry = new Entry();
            _entries.Add(entry);
        }
        else
        {
            entry = _entries[0];
            foreach (var candidate in _entries)
            {
                if (candidate.LastUse < entry.LastUse)
                {
                    entry = candidate;
                }
            }
        }

        entry.Utf8 = publisherUtf8.ToArray();
        entry.Name = Encoding.UTF8.GetString(publisherUtf8);
        return entry;
    }

    private sealed class Entry
    {
        public byte[] Utf8 = [];
        public string Name = "";
        public long Highest;
        public ulong Seen;
        public long LastUse;
    }
}
