using System.Text;

namespace SiloWatch.Messaging.Tests.Support;

/// <summary>Random edits of a valid payload (for the fuzz and fast-path tests): a few bytes changed, removed, inserted, a slice repeated, or a truncation.</summary>
public static class PayloadMutator
{
    private static readonly byte[] Interesting = Encoding.UTF8.GetBytes("{}[]\",:\\0123456789.eE+-ntfu\u00e9\u20ac\ud83d\ude00 \t\n");

    public static byte[] Mutate(byte[] seed, Random random)
    {
        var bytes = new List<byte>(seed);
        var mutations = random.Next(1, 6);
        for (var m = 0; m < mutations && bytes.Count > 0; m++)
        {
            var at = random.Next(bytes.Count);
            switch (random.Next(6))
            {
                case 0:
                    bytes[at] = Interesting[random.Next(Interesting.Length)];
                    break;
                case 1:
                    bytes.RemoveAt(at);
                    break;
                case 2:
                    bytes.Insert(at, Interesting[random.Next(Interesting.Length)]);
                    break;
                case 3:
                    bytes[at] = (byte)random.Next(256);
                    break;
                case 4:
                    // Duplicate a slice: nested or repeated structures.
                    var length = Math.Min(random.Next(1, 40), bytes.Count - at);
                    bytes.InsertRange(at, bytes.GetRange(at, length));
                    break;
                default:
                    bytes.RemoveRange(at, bytes.Count - at); // truncation
                    break;
            }
        }

        return [.. bytes];
    }
}
