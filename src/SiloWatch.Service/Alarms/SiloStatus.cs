using SiloWatch.Monitoring;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Service.Alarms;

/// <summary>What the status page shows of one silo: the last estimate, the discharge state, the rings and the active alarms.</summary>
public sealed record SiloStatus(
    string SiteId,
    string SiloId,
    string Name,
    long EvaluatedMs,
    InventoryEstimate? Estimate,
    DischargeState DischargeState,
    IReadOnlyList<RingStatus> Rings,
    IReadOnlyList<AlarmState> Alarms);

/// <summary>One ring's indices at the last evaluation (NaN when not assessed, e.g. outside a discharge).</summary>
public sealed record RingStatus(string Ring, int GoodGauges, int Gauges, double A1Ratio, double DirectionDeg, double MeasuredOverExpected, string Note);
