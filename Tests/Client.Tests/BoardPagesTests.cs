using Bunit;
using Microsoft.Extensions.DependencyInjection;
using Runfold.Client.Components;
using Runfold.Client.Components.Setup;
using Runfold.Client.Pages;
using Runfold.Client.Setup;
using Runfold.Shared.Studies;

namespace Runfold.Client.Tests;

/// <summary>The studies page and the run board as pages, with fakes behind every service they use: loading, error,
/// data, and re-reading when the study changes.</summary>
public sealed class BoardPagesTests : BunitContext
{
    private static readonly DateTimeOffset At = new(2026, 11, 30, 8, 15, 0, TimeSpan.Zero);
    private readonly FakeCatalog _catalog = new();
    private readonly FakeUpdates _updates = new();

    public BoardPagesTests()
    {
        JSInterop.Mode = JSRuntimeMode.Loose;
        AddAuthorization().SetAuthorized("ana");
        Services.AddSingleton<IStudyCatalog>(_catalog);
        Services.AddSingleton<IStudyUpdates>(_updates);
        Services.AddSingleton<IRunBoard>(new NoBoard());
        Services.AddSingleton<IRunProgress>(new FakeProgress());
        Services.AddSingleton<IActivityFeed>(new FakeFeed());
        Services.AddSingleton<IStudySetup>(new AdminSetup());
    }

    [Fact]
    public void The_studies_page_offers_a_new_study_to_the_admin_and_re_reads_when_a_study_changes()
    {
        _catalog.Studies = [new StudySummary(7, "Heat sink", new RunCounts(40, 0, 0, 0), At, At, "admin created the study with 40 runs")];
        var cut = Render<StudiesPage>();
        cut.WaitForAssertion(() => Assert.Equal("studies/new", cut.Find("#new-study").GetAttribute("href")));
        Assert.Contains("0 of 40 runs done", cut.Find(".study-card").TextContent, StringComparison.Ordinal);
        Assert.Contains("Live: progress as of", cut.Find(".live-mark").TextContent, StringComparison.Ordinal);

        _catalog.Studies = [new StudySummary(7, "Heat sink", new RunCounts(39, 1, 0, 0), At, At.AddMinutes(1), "ana claimed run 1 (lease 24 h)")];
        _updates.Raise(7);
        cut.WaitForAssertion(() => Assert.Contains("ana claimed run 1", cut.Find(".last-activity").TextContent, StringComparison.Ordinal), TimeSpan.FromSeconds(5));
    }

    [Fact]
    public void The_run_board_says_when_the_study_is_not_there()
    {
        _catalog.Detail = null;
        var cut = Render<RunBoardPage>(p => p.Add(c => c.StudyId, 9));
        cut.WaitForAssertion(() => Assert.Contains("Study 9 does not exist", cut.Find(".empty-state").TextContent, StringComparison.Ordinal));
    }

    [Fact]
    public void The_run_board_shows_claims_progress_filters_and_activity_and_re_reads_on_a_change()
    {
        var cut = Render<RunBoardPage>(p => p.Add(c => c.StudyId, 7));
        cut.WaitForAssertion(() => Assert.Equal("3 of 3 runs", cut.Find("#filter-count").TextContent));
        Assert.Single(cut.FindAll("table.mine tbody tr")); // ana holds run 2
        Assert.Contains("ana", cut.Find("table.analysts").TextContent, StringComparison.Ordinal);
        Assert.Contains("ana claimed run 2", cut.Find(".activity").TextContent, StringComparison.Ordinal);
        Assert.Equal("1 of 3 runs done, 1 claimed, 0 failed, 1 open", cut.Find(".state-bar").GetAttribute("aria-label"));

        cut.Find("#filter-mine").Change(true);
        Assert.Equal("2 of 3 runs", cut.Find("#filter-count").TextContent); // the runs ana ran or holds

        _catalog.Runs = [.. _catalog.Runs.Select(r => r.Number == 3 ? r with { State = RunState.Claimed, Assignee = "ben" } : r)];
        _updates.Raise(7);
        cut.WaitForAssertion(() => Assert.Equal("1 of 3 runs done, 2 claimed, 0 failed, 0 open", cut.Find(".state-bar").GetAttribute("aria-label")), TimeSpan.FromSeconds(5));
    }

    [Fact]
    public void Factor_rows_add_remove_and_switch_to_levels_for_a_categorical_factor()
    {
        var factors = new List<FactorDraft> { new() { Name = "fin_height", Low = "20", High = "60", Unit = "mm" } };
        var changes = 0;
        var cut = Render<FactorRowsEditor>(p => p.Add(c => c.Factors, factors).Add(c => c.OnChanged, () => changes++));
        cut.Find("#add-factor").Click();
        Assert.Equal(2, factors.Count);
        cut.Find("#factors\\[1\\]\\.kind").Change(FactorKind.Categorical.ToString());
        Assert.NotNull(cut.Find("#factors\\[1\\]\\.levels"));
        Assert.Empty(cut.FindAll("#factors\\[1\\]\\.low"));
        cut.Find("[aria-label='Remove factor 1']").Click();
        Assert.Single(factors);
        Assert.Equal(FactorKind.Categorical, factors[0].Kind);
        Assert.Equal(3, changes);
    }

    [Fact]
    public void The_scatter_matrix_says_when_there_is_nothing_to_draw_and_what_it_leaves_out()
    {
        Assert.Contains("No runs to draw", Render<DesignScatterMatrix>(p => p.Add(c => c.Factors, []).Add(c => c.Runs, [])).Markup, StringComparison.Ordinal);
        var factors = Enumerable.Range(1, 8).Select(i => new FactorSpec($"x{i}", Low: 0, High: 1)).ToList();
        var runs = Enumerable.Range(0, 4_500).Select(i => new PreviewRun(factors.ToDictionary(f => f.Name, _ => FactorValue.Of(i / 4_500.0)))).ToList();
        var cut = Render<DesignScatterMatrix>(p => p.Add(c => c.Factors, factors).Add(c => c.Runs, runs));
        Assert.Contains("The first 6 factors are drawn.", cut.Markup, StringComparison.Ordinal);
        Assert.Contains("One run in 3 is drawn (4,500 in all).", cut.Markup, StringComparison.Ordinal);
        Assert.Equal("Scatter matrix of 4500 runs over 6 factors", cut.Find(".scatter-matrix").GetAttribute("aria-label"));
    }

    [Fact]
    public void The_burndown_without_runs_says_so()
    {
        var cut = Render<BurndownChart>(p => p.Add(c => c.Points, []));
        Assert.Contains("No runs yet", cut.Markup, StringComparison.Ordinal);
    }

    private sealed class FakeCatalog : IStudyCatalog
    {
        public IReadOnlyList<StudySummary> Studies { get; set; } = [];

        public StudyDetail? Detail { get; set; } = new(7, "Heat sink", null,
            [new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm")], [new ResponseSpec("mass", ResponseGoal.Minimize, Unit: "g")],
            new DesignSpec(DesignMethod.FullFactorial), new RunCounts(1, 1, 1, 0), [new StudyMemberDto(Guid.NewGuid(), "ana", null, StudyRole.Analyst)],
            24, At, YourRole: StudyRole.Analyst);

        public IReadOnlyList<RunDto> Runs { get; set; } =
        [
            new(1, 1, 1, RunState.Done, new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(20) }, "ana", null, new RunResultDto(new Dictionary<string, double> { ["mass"] = 118 }, 1, null)),
            new(2, 2, 1, RunState.Claimed, new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(40) }, "ana", At.AddHours(24)),
            new(3, 3, 1, RunState.Open, new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(60) }),
        ];

        public Task<IReadOnlyList<StudySummary>> ListStudiesAsync(CancellationToken cancellationToken = default) => Task.FromResult(Studies);

        public Task<Outcome<StudyDetail>> GetStudyAsync(int studyId, CancellationToken cancellationToken = default) =>
            Task.FromResult(Detail is { } d && d.Id == studyId ? Outcome<StudyDetail>.Ok(d) : Outcome<StudyDetail>.NotFound($"Study {studyId} does not exist or you are not a member of it."));

        public Task<Outcome<IReadOnlyList<RunDto>>> ListRunsAsync(int studyId, RunState? state = null, CancellationToken cancellationToken = default) =>
            Task.FromResult(Outcome<IReadOnlyList<RunDto>>.Ok(Runs));
    }

    private sealed class FakeUpdates : IStudyUpdates
    {
        private readonly List<(int StudyId, Func<Task> Changed)> _watchers = [];

        public IDisposable Watch(int studyId, Func<Task> changed)
        {
            var watcher = (studyId, changed);
            _watchers.Add(watcher);
            return new Unwatch(() => _watchers.Remove(watcher));
        }

        public void Raise(int studyId)
        {
            foreach (var (id, changed) in _watchers.ToList())
                if (id == studyId) _ = changed();
        }

        private sealed class Unwatch(Action dispose) : IDisposable
        {
            public void Dispose() => dispose();
        }
    }

    private sealed class FakeProgress : IRunProgress
    {
        public Task<Outcome<RunProgressDto>> GetAsync(int studyId, CancellationToken cancellationToken = default) =>
            Task.FromResult(Outcome<RunProgressDto>.Ok(new RunProgressDto([new AnalystProgressDto("ana", null, 1, 1, 0)],
                [new BurndownPointDto(At, 3, 3), new BurndownPointDto(At.AddHours(2), 2, 3)], new FinishEstimateDto(2, 1, 2, 1, At.AddHours(6)), At.AddHours(2))));
    }

    private sealed class FakeFeed : IActivityFeed
    {
        public Task<Outcome<IReadOnlyList<ActivityDto>>> ListAsync(int studyId, long? before = null, int limit = 100, CancellationToken cancellationToken = default) =>
            Task.FromResult(Outcome<IReadOnlyList<ActivityDto>>.Ok([new ActivityDto(5, At, "run.claimed", "ana claimed run 2 (lease 24 h)", "ana", "UI", 2)]));
    }

    private sealed class AdminSetup : IStudySetup
    {
        public Task<bool> CanCreateAsync(CancellationToken cancellationToken = default) => Task.FromResult(true);

        public Task<Outcome<DesignPreview>> PreviewAsync(DesignPreviewRequest request, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<StudyDetail>> CreateAsync(CreateStudyRequest request, CancellationToken cancellationToken = default) => throw new NotSupportedException();
    }

    private sealed class NoBoard : IRunBoard
    {
        public long MaxUploadBytes => 10 * 1024 * 1024;

        public Task<Outcome<IReadOnlyList<RunDto>>> ClaimAsync(int studyId, ClaimRequest request, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<HeartbeatAnswer>> HeartbeatAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<RunDto>> ReleaseAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<IReadOnlyList<RunDto>>> AssignAsync(int studyId, AssignRequest request, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<ResultReceipt>> SubmitResultAsync(int runId, RunState state, IReadOnlyDictionary<string, ResultValue> values, string? note, string idempotencyKey, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<RunHistory>> GetRunAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<RunDto>> ReopenAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<BulkUploadResult> UploadResultsAsync(int studyId, string fileName, Stream content, CancellationToken cancellationToken = default) => throw new NotSupportedException();
    }
}
