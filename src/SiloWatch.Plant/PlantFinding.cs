namespace SiloWatch.Plant;

/// <summary>One problem found in the plant definition: where, which key, which value, and why.</summary>
public sealed record PlantFinding(string Site, string Silo, string Sensor, string Key, string Value, string Problem)
{
    public override string ToString()
    {
        var where = Site.Length == 0 ? "plant" : $"site '{Site}'";
        if (Silo.Length > 0)
        {
            where += $" silo '{Silo}'";
        }

        if (Sensor.Length > 0)
        {
            where += $" sensor '{Sensor}'";
        }

        return $"{where}: {Key} = '{Value}': {Problem}";
    }
}
