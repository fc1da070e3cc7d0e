using System.Diagnostics;
using Runfold.Server.Live;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>
/// Publishes a refit's stage and percent to every instance's pages and streams — only once the refit has run for
/// <see cref="AnalysisOptions.ProgressAfter"/> (a quick refit just ends in its snapshot), and then at each new
/// stage or every 5 % / 250 ms at most.
/// </summary>
public sealed class RefitProgress(StudyLiveHub hub, int studyId, TimeSpan after)
{
    private static readonly TimeSpan MinimumGap = TimeSpan.FromMilliseconds(250);

    private readonly long _started = Stopwatch.GetTimestamp();
    private readonly Lock _gate = new();
    private long _lastAt;
    private string? _lastStage;
    private double _lastPercent = -100;
    private bool _published;

    /// <summary>The result-set version the refit works on (known once its runs are read).</summary>
    public long ResultSetVersion { get; set; }

    /// <param name="percent">0…100.</param>
    public void Report(string stage, double percent)
    {
        AnalysisProgressDto progress;
        lock (_gate)
        {
            var now = Stopwatch.GetTimestamp();
            if (Stopwatch.GetElapsedTime(_started, now) < after) return;
            if (stage == _lastStage && percent - _lastPercent < 5 && Stopwatch.GetElapsedTime(_lastAt, now) < MinimumGap) return;
            (_lastStage, _lastPercent, _lastAt, _published) = (stage, percent, now, true);
            progress = new AnalysisProgressDto(studyId, ResultSetVersion, stage, Math.Round(Math.Clamp(percent, 0, 100), 1));
        }
        hub.Publish(new StudyLiveEvent(studyId, StudyLiveEventKind.Progress, ResultSetVersion, Progress: progress));
    }

    /// <summary>The refit ended without a snapshot: the pages stop showing its progress.</summary>
    public void Stopped()
    {
        lock (_gate)
        {
            if (!_published) return;
            _published = false;
        }
        hub.Publish(new StudyLiveEvent(studyId, StudyLiveEventKind.Progress, ResultSetVersion));
    }

    /// <summary>A part of the refit, reporting fractions 0…1 of its own as percents <paramref name="from"/>…<paramref name="to"/>.</summary>
    public IProgress<double> Part(string stage, double from, double to) => new Span(this, stage, from, to);

    private sealed class Span(RefitProgress owner, string stage, double from, double to) : IProgress<double>
    {
        public void Report(double value) => owner.Report(stage, from + Math.Clamp(value, 0, 1) * (to - from));
    }
}
