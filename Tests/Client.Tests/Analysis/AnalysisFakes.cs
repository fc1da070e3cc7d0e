using Bunit;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Client.Tests.Analysis;

/// <summary>A bUnit context with fakes behind the analysis pages' service interfaces, a fake clock and loose
/// JavaScript interop (Plotly's calls are not under test here).</summary>
public abstract class AnalysisTestContext : BunitContext
{
    protected AnalysisTestContext()
    {
        JSInterop.Mode = JSRuntimeMode.Loose;
        Clock.SetUtcNow(SampleAnalysis.At.AddSeconds(40));
        Services.AddSingleton<TimeProvider>(Clock);
        Services.AddSingleton<IStudyAnalysis>(Analysis);
        Services.AddSingleton<IStudyCatalog>(Catalog);
        Services.AddSingleton<IShareLinks>(Links);
        Services.AddSingleton<ISharedStudies>(Shared);
    }

    protected FakeTimeProvider Clock { get; } = new();

    protected FakeAnalysis Analysis { get; } = new();

    protected FakeCatalog Catalog { get; } = new();

    protected FakeShareLinks Links { get; } = new();

    protected FakeSharedStudies Shared { get; } = new();

    /// <summary>The demo study (26 of 40 runs done) and a sample snapshot over it, served by the fakes.</summary>
    protected (StudyDetail Study, AnalysisSnapshotDto Snapshot) Serve(StudyRole role = StudyRole.Lead, int version = 5)
    {
        var (study, runs) = SampleAnalysis.HeatSink(role: role);
        var snapshot = SampleAnalysis.Snapshot(study, runs, version);
        Catalog.Study = Outcome<StudyDetail>.Ok(study);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(snapshot);
        return (study, snapshot);
    }
}

public sealed class FakeCatalog : IStudyCatalog
{
    /// <summary>Null: the answer never comes (the page stays loading).</summary>
    public Outcome<StudyDetail>? Study { get; set; }

    public Task<IReadOnlyList<StudySummary>> ListStudiesAsync(CancellationToken cancellationToken = default) => Task.FromResult<IReadOnlyList<StudySummary>>([]);

    public Task<Outcome<StudyDetail>> GetStudyAsync(int studyId, CancellationToken cancellationToken = default) =>
        Study is null ? new TaskCompletionSource<Outcome<StudyDetail>>().Task : Task.FromResult(Study);

    public Task<Outcome<IReadOnlyList<RunDto>>> ListRunsAsync(int studyId, RunState? state = null, CancellationToken cancellationToken = default) =>
        Task.FromResult(Outcome<IReadOnlyList<RunDto>>.Ok([]));
}

public sealed class FakeAnalysis : IStudyAnalysis
{
    private readonly List<Func<StudyLiveEvent, Task>> _followers = [];

    /// <summary>Null: the answer never comes.</summary>
    public Outcome<AnalysisSnapshotDto?>? Latest { get; set; }

    public Outcome<IReadOnlyList<AnalysisHistoryPointDto>>? History { get; set; }

    /// <summary>Answers a prediction request; null: the answer never comes.</summary>
    public Func<PredictRequest, Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>>? Predict { get; set; }

    public Outcome<IReadOnlyList<RunDto>> Wave { get; set; } = Outcome<IReadOnlyList<RunDto>>.Ok([]);

    public AnalysisProgressDto? Progress { get; set; }

    public List<PredictRequest> Predictions { get; } = [];

    public List<WaveRequest> Waves { get; } = [];

    public int LatestReads { get; private set; }

    public int HistoryReads { get; private set; }

    public int Followers => _followers.Count;

    public Task<Outcome<AnalysisSnapshotDto?>> GetLatestAsync(int studyId, CancellationToken cancellationToken = default)
    {
        LatestReads++;
        return Latest is null ? new TaskCompletionSource<Outcome<AnalysisSnapshotDto?>>().Task : Task.FromResult(Latest);
    }

    public Task<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>> GetHistoryAsync(int studyId, CancellationToken cancellationToken = default)
    {
        HistoryReads++;
        return History is null ? new TaskCompletionSource<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>>().Task : Task.FromResult(History);
    }

    public Task<Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>> PredictAsync(int studyId, PredictRequest request, CancellationToken cancellationToken = default)
    {
        Predictions.Add(request);
        return Predict is null
            ? new TaskCompletionSource<Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>>().Task
            : Task.FromResult(Predict(request));
    }

    public Task<Outcome<IReadOnlyList<RunDto>>> AddWaveAsync(int studyId, WaveRequest request, CancellationToken cancellationToken = default)
    {
        Waves.Add(request);
        return Task.FromResult(Wave);
    }

    public AnalysisProgressDto? CurrentProgress(int studyId) => Progress;

    public IDisposable Follow(int studyId, Func<StudyLiveEvent, Task> onEvent)
    {
        _followers.Add(onEvent);
        return new Unfollow(() => _followers.Remove(onEvent));
    }

    /// <summary>Tells every follower, as the live analysis would.</summary>
    public async Task RaiseAsync(StudyLiveEvent e)
    {
        foreach (var follower in _followers.ToList()) await follower(e);
    }

    /// <summary>Every point answered with a smooth function of its factors, for every response of the study.</summary>
    public static Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>> Smooth(PredictRequest request, IReadOnlyList<ResponseSpec> responses) =>
        Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>.Ok([.. request.Points.Select(p =>
            (IReadOnlyDictionary<string, PredictedValueDto>)responses.ToDictionary(r => r.Name,
                r => new PredictedValueDto(p.Values.Where(v => !v.IsLevel).Sum(v => v.Number) / 100, 0.01)))]);

    private sealed class Unfollow(Action dispose) : IDisposable
    {
        public void Dispose() => dispose();
    }
}

public sealed class FakeShareLinks : IShareLinks
{
    public Outcome<IReadOnlyList<ShareLinkDto>>? List { get; set; } = Outcome<IReadOnlyList<ShareLinkDto>>.Ok([]);

    public List<ShareLinkRequest> Created { get; } = [];

    public List<int> Revoked { get; } = [];

    public Outcome<ShareLinkDto>? CreateAnswer { get; set; }

    public Task<Outcome<ShareLinkDto>> CreateAsync(int studyId, ShareLinkRequest request, CancellationToken cancellationToken = default)
    {
        Created.Add(request);
        var link = new ShareLinkDto(Created.Count, request.Note, "lena", SampleAnalysis.At, SampleAnalysis.At.AddDays(request.LifetimeDays ?? 14), null, "/shared/tok" + Created.Count);
        return Task.FromResult(CreateAnswer ?? Outcome<ShareLinkDto>.Ok(link));
    }

    public Task<Outcome<IReadOnlyList<ShareLinkDto>>> ListAsync(int studyId, CancellationToken cancellationToken = default) =>
        List is null ? new TaskCompletionSource<Outcome<IReadOnlyList<ShareLinkDto>>>().Task : Task.FromResult(List);

    public Task<Outcome<ShareLinkDto>> RevokeAsync(int studyId, int linkId, CancellationToken cancellationToken = default)
    {
        Revoked.Add(linkId);
        return Task.FromResult(Outcome<ShareLinkDto>.Ok(new ShareLinkDto(linkId, null, "lena", SampleAnalysis.At, SampleAnalysis.At.AddDays(14), SampleAnalysis.At, null)));
    }
}

public sealed class FakeSharedStudies : ISharedStudies
{
    private Func<Task>? _changed;

    /// <summary>Null: the answer never comes.</summary>
    public Outcome<SharedSummary>? Answer { get; set; }

    public List<string> Opened { get; } = [];

    public Task<Outcome<SharedSummary>> OpenAsync(string token, CancellationToken cancellationToken = default)
    {
        Opened.Add(token);
        return Answer is null ? new TaskCompletionSource<Outcome<SharedSummary>>().Task : Task.FromResult(Answer);
    }

    public IDisposable Watch(int studyId, Func<Task> changed)
    {
        _changed = changed;
        return new Stop(() => _changed = null);
    }

    public Task ChangeAsync() => _changed?.Invoke() ?? Task.CompletedTask;

    private sealed class Stop(Action stop) : IDisposable
    {
        public void Dispose() => stop();
    }
}
