using System.Text.Json;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Studies;

/// <summary>Reading the best candidate out of a stored snapshot payload (no database needed).</summary>
public sealed class BestCandidatesTests
{
    private static readonly DateTimeOffset At = new(2026, 11, 30, 8, 0, 0, TimeSpan.Zero);

    private static AnalysisSnapshotDto Snapshot(params CandidateDto[] candidates) =>
        new(3, 12, 20, 24, 1, At, [new ResponseAnalysisDto("mass", "g", null, null, [], [])], candidates);

    private static CandidateDto Candidate(int rank, double desirability, CandidateVerificationDto? verification = null) =>
        new(rank, new Dictionary<string, FactorValue>(), new Dictionary<string, PredictedValueDto> { ["mass"] = new(100 + rank, 1) },
            desirability, 1, false, 0.2, Verification: verification);

    [Fact]
    public void The_rank_one_candidate_is_taken_whatever_the_stored_order()
    {
        var best = BestCandidates.FromSnapshot(JsonSerializer.Serialize(Snapshot(Candidate(2, 0.7), Candidate(1, 0.9)), RunfoldJson.Options))!;
        Assert.Equal((0.9, 3, "g", 101.0), (best.Desirability, best.SnapshotVersion, best.Predicted[0].Unit, best.Predicted[0].Mean));
        Assert.False(best.Verified);
    }

    [Fact]
    public void A_candidate_is_verified_only_when_its_done_verification_run_lies_within_the_cross_validated_error()
    {
        var within = new CandidateVerificationDto(25, RunState.Done, [new VerificationValueDto("mass", 101, 102, 1, 2, true)]);
        var outside = within with { Responses = [new VerificationValueDto("mass", 101, 110, 9, 2, false)] };
        var pending = new CandidateVerificationDto(25, RunState.Claimed, null);
        Assert.True(BestCandidates.From(Snapshot(Candidate(1, 0.9, within)))!.Verified);
        Assert.False(BestCandidates.From(Snapshot(Candidate(1, 0.9, outside)))!.Verified);
        Assert.False(BestCandidates.From(Snapshot(Candidate(1, 0.9, pending)))!.Verified);
    }

    [Theory]
    [InlineData("{not json")]
    [InlineData("""{"version":1,"candidates":[]}""")]
    public void No_candidate_is_shown_for_an_unreadable_payload_or_a_snapshot_without_candidates(string payload) =>
        Assert.Null(BestCandidates.FromSnapshot(payload));
}
