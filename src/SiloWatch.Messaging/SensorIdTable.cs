using System.Text;
using SiloWatch.Plant;

namespace SiloWatch.Messaging;

/// <summary>
/// The sensors of one silo by the UTF-8 bytes of their ids: the decoder finds a sample's sensor
/// straight from the payload, without turning the id into UTF-16 first. Ordinal, as
/// <see cref="SiloRef.TryGetSensor"/>: UTF-8 and UTF-16 encode a valid id one way each, and bytes
/// that are not valid UTF-8 match no id. Open addressing over an FNV-1a hash, built once per silo.
/// </summary>
internal sealed class SensorIdTable
{
    private readonly byte[][] _ids;
    private readonly int[] _slots; // index + 1 of the sensor in each slot, 0 = empty
    private readonly int _mask;

    public SensorIdTable(IReadOnlyList<SensorRef> sensors)
    {
        ArgumentNullException.ThrowIfNull(sensors);
        _ids = [.. sensors.Select(s => Encoding.UTF8.GetBytes(s.Id))];
        var size = 8;
        while (size < sensors.Count * 2)
        {
            size *= 2;
        }

        _slots = new int[size];
        _mask = size - 1;
        for (var i = 0; i < _ids.Length; i++)
        {
            var at = (int)Hash(_ids[i]) & _mask;
            while (_slots[at] != 0)
            {
                at = (at + 1) & _mask;
            }

            _slots[at] = i + 1;
        }
    }

    public bool TryGet(ReadOnlySpan<byte> utf8, out int index)
    {
        var at = (int)Hash(utf8) & _mask;
        while (_slots[at] is var entry and not 0)
        {
            if (utf8.SequenceEqual(_ids[entry - 1]))
            {
                index = entry - 1;
                return true;
            }

            at = (at + 1) & _mask;
        }

        index = -1;
        return false;
    }

    private static uint Hash(ReadOnlySpan<byte> bytes)
    {
        var hash = 2166136261u;
        foreach (var b in bytes)
        {
            hash = (hash ^ b) * 16777619u;
        }

        return hash ^ (hash >> 15);
    }
}
