using Microsoft.Extensions.Configuration;
using Microsoft.Extensions.Configuration.Json;

namespace SiloWatch.Plant;

/// <summary>
/// A JSON file configuration source whose provider answers "which keys sit directly under this
/// path" from an index built once after loading, instead of scanning every key of the file.
/// </summary>
/// <remarks>
/// The stock provider's <c>GetChildKeys</c> walks all keys of the file (and sorts one entry per
/// descendant) for each call, and the binder asks it once or more per bound object and list. A
/// plant file of hundreds of silos holds tens of thousands of keys and about as many objects, so
/// binding it grew with the square of its size (minutes at 400 silos). Parsing, key names, values
/// and their order are the stock JSON provider's: only the child lookup changes.
/// </remarks>
public sealed class IndexedJsonConfigurationSource : JsonConfigurationSource
{
    public override IConfigurationProvider Build(IConfigurationBuilder builder)
    {
        EnsureDefaults(builder);
        return new IndexedJsonConfigurationProvider(this);
    }
}

/// <summary>The JSON file provider with an index from each parent path to its sorted child keys.</summary>
public sealed class IndexedJsonConfigurationProvider(JsonConfigurationSource source) : JsonConfigurationProvider(source)
{
    private ChildIndex? _index;

    public override void Load(Stream stream)
    {
        base.Load(stream);
        _index = null;
    }

    public override void Set(string key, string? value)
    {
        base.Set(key, value);
        _index = null;
    }

    public override IEnumerable<string> GetChildKeys(IEnumerable<string> earlierKeys, string? parentPath)
    {
        var index = _index ??= ChildIndex.Build(Data.Keys);
        var own = index.ChildrenOf(parentPath);
        var results = new List<string>(own);
        results.AddRange(earlierKeys);
        if (results.Count > own.Count)
        {
            // Earlier providers' keys mix in: sort the union as the stock provider does.
            results.Sort(ConfigurationKeyComparer.Instance);
        }

        return results;
    }

    /// <summary>Every parent path (case-insensitive, as configuration keys are) with its distinct child segments, sorted.</summary>
    private sealed class ChildIndex
    {
        private readonly string[] _top;
        private readonly Dictionary<string, string[]> _children;

        private ChildIndex(string[] top, Dictionary<string, string[]> children)
        {
            _top = top;
            _children = children;
        }

        public IReadOnlyList<string> ChildrenOf(string? parentPath) =>
            parentPath is null ? _top : _children.TryGetValue(parentPath, out var found) ? found : [];

        public static ChildIndex Build(IEnumerable<string> keys)
        {
            var top = new HashSet<string>(StringComparer.OrdinalIgnoreCase);
            var children = new Dictionary<string, HashSet<string>>(StringComparer.OrdinalIgnoreCase);
            foreach (var key in keys)
            {
                // "a:b:c" is the child "a" of the top, "b" of "a" and "c" of "a:b".
                var delimiter = key.IndexOf(ConfigurationPath.KeyDelimiter, StringComparison.Ordinal);
                top.Add(delimiter < 0 ? key : key[..delimiter]);
                while (delimiter >= 0)
                {
                    var next = key.IndexOf(ConfigurationPath.KeyDelimiter, delimiter + 1, StringComparison.Ordinal);
                    var parent = key[..delimiter];
                    var child = next < 0 ? key[(delimiter + 1)..] : key[(delimiter + 1)..next];
                    if (!children.TryGetValue(parent, out var set))
                    {
                        set = new HashSet<string>(StringComparer.OrdinalIgnoreCase);
                        children.Add(parent, set);
                    }

                    set.Add(child);
                    delimiter = next;
                }
            }

            return new ChildIndex(Sorted(top), children.ToDictionary(p => p.Key, p => Sorted(p.Value), StringComparer.OrdinalIgnoreCase));
        }

        private static string[] Sorted(HashSet<string> keys)
        {
            var array = keys.ToArray();
            Array.Sort(array, ConfigurationKeyComparer.Instance);
            return array;
        }
    }
}
