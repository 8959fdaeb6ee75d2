using SiloWatch.Storage;

namespace SiloWatch.Review.Tests.Support;

/// <summary>
/// Invented discharge events for the review tests (the demo plant's site and silo names; numbers made up):
/// a silo of six axial gauges at 60° spacing whose load rises toward <c>directionDeg</c>.
/// </summary>
public static class SomeEvents
{
    public const long StartMs = 1_773_176_400_000; // 2026-03-10T21:00:00Z

    public static readonly double[] Angles = [0, 60, 120, 180, 240, 300];

    public static IReadOnlyList<CaptureChannel> Channels()
    {
        var channels = new List<CaptureChannel>
        {
            new("mass_kg", CaptureChannelKind.Mass, "kg"),
            new("rate_kg_s", CaptureChannelKind.Rate, "kg/s"),
        };
        channels.AddRange(Angles.Select((a, k) => new CaptureChannel($"strain_micro:R1-{k:000}", CaptureChannelKind.Strain, "microstrain", $"R1-{k:000}", "R1", a)));
        channels.AddRange(Angles.Select((a, k) => new CaptureChannel($"temperature_c:R1-{k:000}", CaptureChannelKind.Temperature, "degC", $"R1-{k:000}", "R1", a)));
        channels.Add(new CaptureChannel("a1_ratio:R1", CaptureChannelKind.RingA1Ratio, "ratio", Ring: "R1"));
        channels.Add(new CaptureChannel("a1_direction_deg:R1", CaptureChannelKind.RingDirection, "deg", Ring: "R1"));
        channels.Add(new CaptureChannel("mean_force_kn_m:R1", CaptureChannelKind.RingMeanForce, "kN/m", Ring: "R1"));
        return channels;
    }

    /// <summary>A 30 min discharge of 90 t with one-second frames from 60 s before to 60 s after.</summary>
    public static ReviewedEvent Eccentric(double directionDeg = 300, int frames = 1920)
    {
        var channels = Channels();
        var durationS = 1800.0;
        var list = new List<CaptureFrame>();
        for (var i = 0; i < frames; i++)
        {
            var t = -60 + (i * (durationS + 120) / frames);
            var flowing = t is >= 0 and <= 1800;
            var done = Math.Clamp(t / durationS, 0, 1);
            var values = new List<float> { (float)(400_000 - (90_000 * done)), flowing ? -50f : 0f };
            var a1 = flowing ? (float)(0.13 * Math.Sin(Math.PI * done)) : float.NaN;
            values.AddRange(Angles.Select(a => (float)(-80 - (flowing ? 12 * Math.Cos((a - directionDeg) * Math.PI / 180) * Math.Sin(Math.PI * done) : 0))));
            values.AddRange(Angles.Select(a => (float)(6 + (0.5 * Math.Cos(a * Math.PI / 180)))));
            values.Add(a1);
            values.Add(flowing ? (float)directionDeg : float.NaN);
            values.Add((float)(95 - (20 * done)));
            list.Add(new CaptureFrame(StartMs + (long)(t * 1000), [.. values]));
        }

        var capture = new EventCapture("brackenford", "S1", 1000, 0, channels, list);
        var peakMs = StartMs + 900_000;
        var harmonics = new[]
        {
            new PatternHarmonic(0, 1.5, 0, 1.5, 0),
            new PatternHarmonic(1, 12 * Math.Cos(directionDeg * Math.PI / 180), 12 * Math.Sin(directionDeg * Math.PI / 180), 12, directionDeg),
            new PatternHarmonic(2, 1.0, -0.5, Math.Sqrt(1.25), 166.7),
        };
        var gauges = Angles.Select((a, k) => new GaugeChange($"R1-{k:000}", a, k == 4 ? null : PatternHarmonic.Evaluate(harmonics, a) + 0.4)).ToArray();
        var ring = new RingEventDetails("R1", "axial", 1.5, 6, 104.2, peakMs, 120.3, 88.0, 0.93, 0.131, directionDeg, 0.021, 1.12,
            new RingPattern(peakMs, 0.131, directionDeg, harmonics, gauges));
        var hoop = new RingEventDetails("R2", "hoop", 6.0, 6, 95.1, peakMs - 60_000, 101.7, 80.2, 0.95, 0.052, 41, 0.011, 1.05, null);
        var profile = Enumerable.Range(0, 37).Select(i => i * 0.5)
            .Select(h => new ExpectedWallPoint(h, 18 - h, 9 * (18 - h), 9.9 * (18 - h), 5.5 * Math.Sqrt(18 - h) * 3, 6.3 * Math.Sqrt(18 - h) * 3)).ToArray();
        var details = new DischargeEventDetails(DischargeEventDetails.CurrentFormat, "silowatch-0", "Wheat silo 1 (east row)", "wheat", 310_000, durationS,
            list[0].TimestampMs, list[^1].TimestampMs, new DischargeFactors(1.15, 1.10, "EN 1991-4 §5.2.2 [M?] (test value)"), [ring, hoop],
            [new EventAlarm("brackenford/S1/asymmetry-a1-R1", 2, StartMs + 600_000, 0.131, 0.10, "acknowledged", "Silo S1: uneven axial wall load at ring R1 during discharge. Never enter the silo.")],
            new EventDataQuality(12_000, 0.97, 0.02, 0.01, 0.0, 1.0, 0.0, [new SensorFault("R1-004", 200, 120, "stuck")]),
            profile, ["test event"]);
        var record = new DischargeEventRecord
        {
            Id = 7,
            SiteId = "brackenford",
            SiloId = "S1",
            StartedMs = StartMs,
            EndedMs = StartMs + (long)(durationS * 1000),
            MassAtStartKg = 400_000,
            MassOutKg = 90_000,
            MeanRateKgPerS = 50,
            PeakRateKgPerS = 53.5,
            MaxAsymmetryRatio = 0.131,
            AsymmetryDirectionDeg = directionDeg,
            MaxA2Ratio = 0.021,
            MaxPeakOverMean = 1.12,
            MaxMeasuredOverExpected = 0.95,
            HighestPriority = 2,
            AlarmsRaised = 1,
            DetailsJson = details.ToJson(),
        };
        return new ReviewedEvent(record, details, capture);
    }
}
