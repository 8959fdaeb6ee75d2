using System.ComponentModel.DataAnnotations;

namespace SiloWatch.Service.Events;

/// <summary>How discharge events are recorded in the journal. Section <see cref="SectionName"/>.</summary>
public sealed class EventRecordingOptions
{
    public const string SectionName = "Events";

    /// <summary>Spacing of the captured frames of a silo's series. Default 1 s (frames come at most once per evaluation).</summary>
    public TimeSpan CaptureInterval { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>How far before the discharge's onset the capture starts (a rolling buffer per silo holds it). Default 60 s.</summary>
    public TimeSpan PreStart { get; set; } = TimeSpan.FromSeconds(60);

    /// <summary>
    /// How far after the end of the flow the capture reaches. Default 60 s. The event is closed when the
    /// wall watch's settling ends (WallWatch:SettlingTime, 2 min by default), so a longer window is cut there.
    /// </summary>
    public TimeSpan PostEnd { get; set; } = TimeSpan.FromSeconds(60);

    /// <summary>
    /// Cap on the frames of one event. Default 7200 (2 h at 1 s). A longer discharge is halved in time
    /// resolution (neighbouring frames averaged) each time it reaches the cap, so memory stays bounded.
    /// </summary>
    [Range(16, 1_000_000)]
    public int MaxCaptureFrames { get; set; } = 7200;

    /// <summary>
    /// The peak rate of an event is the highest mean outflow over any window of this length within the flow
    /// (from the captured mass), so that the estimator's transient at a start does not count as a peak. Default 60 s.
    /// </summary>
    public TimeSpan PeakRateWindow { get; set; } = TimeSpan.FromSeconds(60);

    /// <summary>Height step of the expected load profile stored with each event, m. Default 0.5.</summary>
    [Range(0.05, 100)]
    public double ProfileStepM { get; set; } = 0.5;
}
