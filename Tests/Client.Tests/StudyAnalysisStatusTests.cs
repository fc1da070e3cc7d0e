using Bunit;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using Runfold.Client.Components.Analysis;
using Runfold.Shared.Studies;

namespace Runfold.Client.Tests;

/// <summary>The study page's analysis status against a fake live analysis: what the latest snapshot is based on,
/// how long ago it was computed (moving on by itself), the refit under way, and a new snapshot without a reload.</summary>
public sealed class StudyAnalysisStatusTests : BunitContext
{
    private static readonly DateTimeOffset At = new(2026, 11, 30, 8, 15, 0, TimeSpan.Zero);

    private readonly FakeAnalysis _analysis = new();
    private readonly FakeTimeProvider _clock = new(At);

    public StudyAnalysisStatusTests()
    {
        Services.AddSingleton<IStudyAnalysis>(_analysis);
        Services.AddSingleton<TimeProvider>(_clock);
    }

    [Fact]
    public void Before_the_first_snapshot_it_says_when_one_comes()
    {
        var cut = Render<StudyAnalysisStatus>(p => p.Add(c => c.StudyId, 7));
        Assert.Equal("No analysis yet: the first is computed as soon as a result is stored.", cut.Find(".snapshot-basis").TextContent.Trim());
    }

    [Fact]
    public void It_says_what_the_snapshot_is_based_on_and_how_long_ago_and_follows_refits_live()
    {
        _analysis.Latest = Snapshot(version: 3, basedOn: 47, computedAt: At, failed: 2);
        _clock.Advance(TimeSpan.FromSeconds(12));
        var cut = Render<StudyAnalysisStatus>(p => p.Add(c => c.StudyId, 7));
        Assert.Equal("Analysis based on 47 of 81 runs, computed 12 s ago · 2 failed runs left out", Text(cut.Find(".snapshot-basis")));
        Assert.Equal("2026-11-30 08:15 UTC", cut.Find("time").GetAttribute("title"));

        // The relative time moves on without any event.
        _clock.Advance(TimeSpan.FromSeconds(65));
        cut.WaitForAssertion(() => Assert.Contains("computed 1 min ago", Text(cut.Find(".snapshot-basis")), StringComparison.Ordinal));

        // Another analyst's result starts a refit somewhere: its stage and percent show.
        _analysis.Raise(new StudyLiveEvent(7, StudyLiveEventKind.Progress, 48, Progress: new AnalysisProgressDto(7, 48, "fitting pressure_drop", 40)));
        cut.WaitForAssertion(() => Assert.Equal("Refit under way: fitting pressure_drop · 40 %", Text(cut.Find(".refit-progress"))));
        Assert.Equal("40", cut.Find("progress").GetAttribute("value"));

        // The snapshot is stored: the line updates and the progress goes, without a reload.
        _analysis.Latest = Snapshot(version: 4, basedOn: 48, computedAt: _clock.GetUtcNow(), failed: 2);
        _analysis.Raise(new StudyLiveEvent(7, StudyLiveEventKind.Snapshot, 48, SnapshotVersion: 4));
        cut.WaitForAssertion(() => Assert.StartsWith("Analysis based on 48 of 81 runs, computed just now", Text(cut.Find(".snapshot-basis")), StringComparison.Ordinal));
        Assert.Empty(cut.FindAll(".refit-progress"));
    }

    [Fact]
    public void A_notice_shows_while_runs_are_too_few_and_a_stopped_refit_clears_its_progress()
    {
        _analysis.Latest = Snapshot(version: 1, basedOn: 2, computedAt: At, failed: 0) with
        {
            Notice = "A surrogate of 5 factors needs at least 7 done runs; 2 are done, so 5 more are needed.",
            RunsStillNeeded = 5,
        };
        _analysis.Progress = new AnalysisProgressDto(7, 3, "reading runs", 0);
        var cut = Render<StudyAnalysisStatus>(p => p.Add(c => c.StudyId, 7));
        Assert.Equal("A surrogate of 5 factors needs at least 7 done runs; 2 are done, so 5 more are needed.", cut.Find(".snapshot-notice").TextContent);
        Assert.Equal("Refit under way: reading runs · 0 %", Text(cut.Find(".refit-progress")));

        _analysis.Raise(new StudyLiveEvent(7, StudyLiveEventKind.Progress, 3)); // the refit was overtaken
        cut.WaitForAssertion(() => Assert.Empty(cut.FindAll(".refit-progress")));
    }

    [Fact]
    public async Task Leaving_the_page_stops_following()
    {
        Render<StudyAnalysisStatus>(p => p.Add(c => c.StudyId, 7));
        Assert.Equal(1, _analysis.Followers);
        await DisposeComponentsAsync();
        Assert.Equal(0, _analysis.Followers);
    }

    private static string Text(AngleSharp.Dom.IElement element) => string.Join(" ", element.TextContent.Split((char[]?)null, StringSplitOptions.RemoveEmptyEntries));

    private static AnalysisSnapshotDto Snapshot(int version, int basedOn, DateTimeOffset computedAt, int failed) =>
        new(version, 40 + version, basedOn, 81, failed, computedAt, [], []);

    private sealed class FakeAnalysis : IStudyAnalysis
    {
        private readonly List<Func<StudyLiveEvent, Task>> _followers = [];

        public AnalysisSnapshotDto? Latest { get; set; }

        public AnalysisProgressDto? Progress { get; set; }

        public int Followers => _followers.Count;

        public void Raise(StudyLiveEvent liveEvent)
        {
            foreach (var follower in _followers.ToList()) follower(liveEvent).GetAwaiter().GetResult();
        }

        public Task<Outcome<AnalysisSnapshotDto?>> GetLatestAsync(int studyId, CancellationToken cancellationToken = default) =>
            Task.FromResult(Outcome<AnalysisSnapshotDto?>.Ok(Latest));

        public AnalysisProgressDto? CurrentProgress(int studyId) => Progress;

        public IDisposable Follow(int studyId, Func<StudyLiveEvent, Task> onEvent)
        {
            _followers.Add(onEvent);
            return new Unfollow(() => _followers.Remove(onEvent));
        }

        public Task<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>> GetHistoryAsync(int studyId, CancellationToken cancellationToken = default) =>
            throw new NotSupportedException("The status does not read the history.");

        public Task<Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>> PredictAsync(int studyId, PredictRequest request, CancellationToken cancellationToken = default) =>
            throw new NotSupportedException("The status does not predict.");

        public Task<Outcome<IReadOnlyList<RunDto>>> AddWaveAsync(int studyId, WaveRequest request, CancellationToken cancellationToken = default) =>
            throw new NotSupportedException("The status does not add waves.");

        private sealed class Unfollow(Action undo) : IDisposable
        {
            public void Dispose() => undo();
        }
    }
}
