using System.Text;
using SiloWatch.Plant;

namespace SiloWatch.Service.Hosting;

/// <summary>Which silos this instance owns: an explicit list, or a stable hash of "site/silo" modulo the shard count.</summary>
public sealed class ShardMap
{
    public ShardMap(PlantRegistry registry, InstanceOptions options)
    {
        var explicitList = new HashSet<string>(options.Silos, StringComparer.Ordinal);
        Owned = [.. registry.Silos.Where(s => explicitList.Count > 0
            ? explicitList.Contains(s.Key)
            : ShardOf(s.Key, options.ShardCount) == options.ShardIndex)];
        Unknown = [.. explicitList.Where(k => !registry.TryGetSilo(k.AsSpan(), out _))];
    }

    public IReadOnlyList<SiloRef> Owned { get; }

    /// <summary>Entries of the explicit list that name no silo of the plant.</summary>
    public IReadOnlyList<string> Unknown { get; }

    /// <summary>FNV-1a over the UTF-8 key: the same on every machine and run (string.GetHashCode is not).</summary>
    public static int ShardOf(string siloKey, int shardCount)
    {
        uint hash = 2166136261;
        foreach (var b in Encoding.UTF8.GetBytes(siloKey))
        {
            hash = (hash ^ b) * 16777619;
        }

        return (int)(hash % (uint)shardCount);
    }
}
