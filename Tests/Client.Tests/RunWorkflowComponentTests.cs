using Bunit;
using Microsoft.Extensions.DependencyInjection;
using Runfold.Client.Components;
using Runfold.Shared.Studies;

namespace Runfold.Client.Tests;

/// <summary>The run workflow's components with simple fakes: text stays text, tokens are never shown after
/// creation, the result form sends what was typed and shows the server's field errors.</summary>
public sealed class RunWorkflowComponentTests : BunitContext
{
    private static readonly DateTimeOffset At = new(2026, 11, 30, 8, 15, 0, TimeSpan.Zero);

    [Fact]
    public void Activity_details_with_markup_are_shown_as_text()
    {
        var cut = Render<ActivityList>(p => p.Add(c => c.Events,
        [
            new ActivityDto(2, At, "result.stored", "ana marked run 3 failed: <img src=x onerror=alert(1)>", "ana", "API token 'cluster'", 3),
            new ActivityDto(1, At, "lease.lapsed", "The lease of ana on run 2 lapsed", null, "server", 2),
        ]));
        var items = cut.FindAll(".activity-item");
        Assert.Equal(2, items.Count);
        Assert.Empty(cut.FindAll("img"));
        Assert.Contains("<img src=x onerror=alert(1)>", items[0].QuerySelector(".activity-detail")!.TextContent, StringComparison.Ordinal);
        Assert.Equal("via API token 'cluster'", items[0].QuerySelector(".via")!.TextContent);
        Assert.Equal("2026-11-30 08:15 UTC", items[1].QuerySelector("time")!.TextContent);
        Assert.Contains("kind-lease-lapsed", items[1].ClassName, StringComparison.Ordinal);
    }

    [Fact]
    public void The_token_list_shows_prefixes_and_last_use_and_offers_revoke_only_for_live_tokens()
    {
        ApiTokenDto? revoked = null;
        var cut = Render<TokenList>(p => p
            .Add(c => c.Tokens, [new ApiTokenDto(1, "cluster jobs", "rf_abc1234", At, At.AddHours(2), null), new ApiTokenDto(2, "old laptop", "rf_zzz9999", At, null, At)])
            .Add(c => c.OnRevoke, t => revoked = t));
        var rows = cut.FindAll("tbody tr");
        Assert.Equal("rf_abc1234…", rows[0].QuerySelector("code")!.TextContent);
        Assert.Contains("2026-11-30 10:15 UTC", rows[0].TextContent, StringComparison.Ordinal);
        Assert.Contains("never", rows[1].TextContent, StringComparison.Ordinal);
        Assert.Contains("revoked", rows[1].TextContent, StringComparison.Ordinal);
        Assert.Null(rows[1].QuerySelector("button"));
        rows[0].QuerySelector("button")!.Click();
        Assert.Equal(1, revoked?.Id);
    }

    [Fact]
    public void The_result_form_sends_the_typed_values_with_one_key_and_shows_field_errors()
    {
        var board = new FakeBoard();
        Services.AddSingleton<IRunBoard>(board);
        var run = new RunDto(11, 3, 1, RunState.Claimed, new Dictionary<string, FactorValue>(), "ana");
        ResultReceipt? stored = null;
        var cut = Render<ResultForm>(p => p
            .Add(c => c.Run, run)
            .Add(c => c.Responses, [new ResponseSpec("thermal_resistance", Unit: "K/W"), new ResponseSpec("mass", Unit: "g")])
            .Add(c => c.OnStored, r => stored = r));

        cut.Find("#value-thermal_resistance").Change("0.42");
        cut.Find("#value-mass").Change("heavy");
        cut.Find("#submit-result").Click();
        Assert.Equal(0.42, board.Values!["thermal_resistance"].Number);
        Assert.Equal("heavy", board.Values["mass"].Text);
        Assert.Contains("'heavy' is not a number", cut.Find(".field-error").TextContent, StringComparison.Ordinal);
        Assert.Null(stored);
        var firstKey = board.Key;

        cut.Find("#value-mass").Change("118");
        cut.Find("#submit-result").Click();
        Assert.Equal(firstKey, board.Key); // the same submission retried: the server keeps one revision
        Assert.Equal(2, stored?.Revision);
    }

    [Fact]
    public void A_revision_note_with_markup_is_text_and_reopen_is_offered_for_a_failed_run()
    {
        var history = new RunHistory(
            new RunDto(11, 3, 1, RunState.Failed, new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(40) }, "ana"),
            [new RevisionDto(1, RunState.Failed, new Dictionary<string, double>(), "<script>alert('x')</script>", null, "ana", "UI", At, true)]);
        var reopened = false;
        var cut = Render<RunHistoryPanel>(p => p.Add(c => c.History, history).Add(c => c.CanReopen, true).Add(c => c.OnReopen, () => reopened = true));
        Assert.Empty(cut.FindAll("script"));
        Assert.Equal("<script>alert('x')</script>", cut.Find("td.note").TextContent);
        cut.Find("#reopen").Click();
        Assert.True(reopened);
    }

    [Theory]
    [InlineData("3, 4, 10-12", new[] { 3, 4, 10, 11, 12 })]
    [InlineData("7", new[] { 7 })]
    [InlineData("5;5 6", new[] { 5, 6 })]
    public void Run_numbers_and_ranges_are_read(string text, int[] expected) => Assert.Equal(expected, RunNumbers.Parse(text));

    [Theory]
    [InlineData("")]
    [InlineData("three")]
    [InlineData("9-4")]
    [InlineData("1-100000")]
    public void Other_text_is_not_a_run_list(string text) => Assert.Null(RunNumbers.Parse(text));

    private sealed class FakeBoard : IRunBoard
    {
        public IReadOnlyDictionary<string, ResultValue>? Values { get; private set; }

        public string? Key { get; private set; }

        public long MaxUploadBytes => 10 * 1024 * 1024;

        public Task<Outcome<ResultReceipt>> SubmitResultAsync(int runId, RunState state, IReadOnlyDictionary<string, ResultValue> values,
            string? note, string idempotencyKey, CancellationToken cancellationToken = default)
        {
            Values = values;
            Key = idempotencyKey;
            if (values.Values.Any(v => !v.IsNumber))
                return Task.FromResult(Outcome<ResultReceipt>.Unprocessable(ValidationErrors.Single("values.mass", "'heavy' is not a number; mass needs a number.")));
            return Task.FromResult(Outcome<ResultReceipt>.Ok(new ResultReceipt(runId, 3, 2, state)));
        }

        public Task<Outcome<IReadOnlyList<RunDto>>> ClaimAsync(int studyId, ClaimRequest request, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<HeartbeatAnswer>> HeartbeatAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<RunDto>> ReleaseAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<IReadOnlyList<RunDto>>> AssignAsync(int studyId, AssignRequest request, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<RunHistory>> GetRunAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<Outcome<RunDto>> ReopenAsync(int runId, CancellationToken cancellationToken = default) => throw new NotSupportedException();

        public Task<BulkUploadResult> UploadResultsAsync(int studyId, string fileName, Stream content, CancellationToken cancellationToken = default) => throw new NotSupportedException();
    }
}
