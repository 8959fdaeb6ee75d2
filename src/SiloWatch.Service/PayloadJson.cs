using System.Text.Json;

namespace SiloWatch.Service;

/// <summary>Writing helpers shared by the service's MQTT and HTTP payloads.</summary>
public static class PayloadJson
{
    /// <summary>A number rounded to 6 decimals; JSON has no NaN or infinity, so an unknown number is written as null.</summary>
    public static void Number(Utf8JsonWriter w, string name, double? value)
    {
        if (value is { } v && double.IsFinite(v))
        {
            w.WriteNumber(name, Math.Round(v, 6));
        }
        else
        {
            w.WriteNull(name);
        }
    }
}
