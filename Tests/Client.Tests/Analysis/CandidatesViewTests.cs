using Bunit;
using Runfold.Client.Components;
using Runfold.Client.Pages;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Client.Tests.Analysis;

/// <summary>The candidates page: the cautions, badges, predictions ± sd with units, limit chances, keyboard
/// selection, the lead's "verify" (and nobody else's), verification runs, and the empty and failed states.</summary>
public sealed class CandidatesViewTests : AnalysisTestContext
{
    [Fact]
    public void The_cautions_stand_above_the_ranked_candidates()
    {
        Serve();
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        var caution = cut.Find(".caution-note").TextContent;
        Assert.Contains("predictions of the surrogate models, not results", caution, StringComparison.Ordinal);
        Assert.Contains("\"unverified\"", caution, StringComparison.Ordinal);
        Assert.Contains("confirmed by full simulation and reviewed under the applicable codes and licensed engineering practice", caution, StringComparison.Ordinal);
    }

    [Fact]
    public void Each_candidate_shows_its_badges_predictions_with_units_and_the_chance_of_meeting_the_limit()
    {
        var (_, snapshot) = Serve();
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        var rows = cut.FindAll("table.candidates tbody tr");
        Assert.Equal(snapshot.Candidates.Count, rows.Count);
        string Badges(int i) => string.Join(" ", rows[i].QuerySelectorAll(".badge").Select(b => b.TextContent));
        Assert.Equal("verified", Badges(0));
        Assert.Equal("verifying", Badges(1));
        Assert.Equal("verified: differs", Badges(2));
        Assert.Equal("extrapolating unverified", Badges(3));
        Assert.Contains("nearest at 0.62 in coded units", rows[3].QuerySelector(".badge-extrapolating")!.GetAttribute("title"), StringComparison.Ordinal);

        var headers = cut.FindAll("table.candidates thead tr:last-child th").Select(h => h.TextContent.Trim()).ToList();
        Assert.Contains(headers, h => h.StartsWith("thermal_resistance", StringComparison.Ordinal) && h.EndsWith("[K/W]", StringComparison.Ordinal));
        Assert.Contains(headers, h => h.Replace(" ", "", StringComparison.Ordinal) == "pressure_drop≤60Pa");

        var best = snapshot.Candidates[0];
        var sd = best.Predicted["thermal_resistance"].Sd!.Value;
        var decimals = 1 - (int)Math.Floor(Math.Log10(sd));
        var text = $"{Math.Round(best.Predicted["thermal_resistance"].Mean, decimals).ToString("N" + decimals, System.Globalization.CultureInfo.InvariantCulture)} ± {Math.Round(sd, decimals).ToString("N" + decimals, System.Globalization.CultureInfo.InvariantCulture)}";
        Assert.Contains(text, rows[0].TextContent, StringComparison.Ordinal);
        Assert.Contains($"{Math.Round(100 * best.LimitProbabilities!["pressure_drop"]):0} %", rows[0].TextContent, StringComparison.Ordinal);
        Assert.Contains("K/W", cut.Find(".candidate-detail").TextContent, StringComparison.Ordinal); // the detail carries units in its cells
    }

    [Fact]
    public void Arrow_keys_move_the_selection_through_the_table_and_the_detail_follows()
    {
        Serve();
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("Candidate 1", cut.Find(".candidate-detail h2").TextContent, StringComparison.Ordinal);
        cut.Find("table.candidates tbody tr").KeyDown("ArrowDown");
        Assert.Equal("true", cut.FindAll("table.candidates tbody tr")[1].GetAttribute("aria-selected"));
        Assert.Contains("Candidate 2", cut.Find(".candidate-detail h2").TextContent, StringComparison.Ordinal);
        cut.FindAll("table.candidates tbody tr")[1].KeyDown("End");
        Assert.Equal("true", cut.FindAll("table.candidates tbody tr")[^1].GetAttribute("aria-selected"));
        Assert.Equal("0", cut.FindAll("table.candidates tbody tr")[^1].GetAttribute("tabindex"));
        cut.FindAll("table.candidates tbody tr")[^1].KeyDown("Home");
        Assert.Equal("true", cut.Find("table.candidates tbody tr").GetAttribute("aria-selected"));
    }

    [Fact]
    public void The_lead_verifies_a_candidate_after_confirming_and_is_told_which_run_to_claim()
    {
        var (_, snapshot) = Serve();
        Analysis.Wave = Outcome<IReadOnlyList<RunDto>>.Ok([new RunDto(501, 44, 3, RunState.Open, snapshot.Candidates[4].Factors)]);
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        var verifiable = cut.FindAll("table.candidates tbody tr").Where(r => r.QuerySelector("button") is not null).ToList();
        Assert.Equal(snapshot.Candidates.Count - 3, verifiable.Count); // verified, verifying and differing ones are not offered again

        verifiable[1].QuerySelector("button")!.Click();
        Assert.Empty(Analysis.Waves);
        Assert.Contains("Add a verification run for candidate 5?", cut.Find("[role=dialog]").TextContent, StringComparison.Ordinal);
        cut.Find("#confirm-verify").Click();
        var wave = Assert.Single(Analysis.Waves);
        Assert.Equal(("verify", 5, 1), (wave.Kind, wave.CandidateRank, wave.Count));
        Assert.Equal("Run 44 will verify candidate 5 of analysis 5; claim it on the run board.", cut.Find(".notice-ok").TextContent);
        Assert.Empty(cut.FindAll("[role=dialog]"));
    }

    [Fact]
    public void A_refused_wave_is_a_sentence_and_readers_without_the_lead_role_get_no_verify_button()
    {
        Serve();
        Analysis.Wave = Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("kind", "This server does not run the live analysis."));
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Empty(cut.FindAll("#verify-candidate")); // candidate 1 is verified: its detail offers nothing …
        cut.FindAll("table.candidates tbody tr")[4].Click();
        cut.Find("#verify-candidate").Click(); // … candidate 5 is not
        cut.Find("#confirm-verify").Click();
        Assert.Equal("This server does not run the live analysis.", cut.Find(".notice-error").TextContent);

        Serve(StudyRole.Viewer);
        var viewer = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Empty(viewer.FindAll("table.candidates button"));
        Assert.Empty(viewer.FindAll("#verify-candidate"));
    }

    [Fact]
    public void Verification_runs_show_predicted_against_observed_and_the_verdict_against_the_cross_validated_error()
    {
        Serve();
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        var rows = cut.FindAll(".verification tbody tr");
        Assert.Equal(7, rows.Count); // candidate 1: three responses, candidate 2: pending, candidate 3: three responses
        Assert.All(rows.Take(3), r => Assert.Contains("within the CV error", r.TextContent, StringComparison.Ordinal));
        Assert.Contains("The verification run is claimed", rows[3].TextContent, StringComparison.Ordinal);
        Assert.Contains("outside the CV error", rows[4].TextContent, StringComparison.Ordinal);
        Assert.Contains("K/W", rows[0].TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void The_verification_table_shows_the_prediction_made_when_the_run_was_added()
    {
        var (_, snapshot) = Serve();
        var first = snapshot.Candidates[0].Verification!.Responses![0];
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("Predicted then", cut.Find(".verification thead").TextContent, StringComparison.Ordinal);
        var cells = cut.FindAll(".verification tbody tr")[0].QuerySelectorAll("td");
        Assert.Equal(Formats.WithUnit(first.Predicted, "K/W"), cells[2].TextContent);
        Assert.Equal(Formats.WithUnit(first.Observed, "K/W"), cells[3].TextContent);
    }

    [Fact]
    public void The_lead_adds_a_next_wave_aimed_where_a_response_is_least_known_and_is_told_which_runs_came()
    {
        var (_, snapshot) = Serve();
        Analysis.Wave = Outcome<IReadOnlyList<RunDto>>.Ok([
            new RunDto(601, 45, 4, RunState.Open, snapshot.Candidates[0].Factors),
            new RunDto(602, 44, 4, RunState.Open, snapshot.Candidates[1].Factors),
        ]);
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("Expected improvement", cut.Find(".next-wave").TextContent, StringComparison.Ordinal);
        cut.Find("#wave-count").Change("2");
        cut.Find("#wave-aim").Change("Unsure");
        cut.Find("#wave-response").Change("pressure_drop");
        Assert.Contains("Largest predictive standard deviation", cut.Find(".next-wave").TextContent, StringComparison.Ordinal);
        cut.Find("#add-wave").Click();
        var wave = Assert.Single(Analysis.Waves);
        Assert.Equal(("infill", 2, "variance", null, "pressure_drop"), (wave.Kind, wave.Count, wave.Criterion, wave.CandidateRank, wave.Response));
        Assert.Equal("Runs 44–45 were added as wave 4; claim them on the run board.", cut.Find(".next-wave .notice-ok").TextContent);

        // Gaps between runs name no response.
        cut.Find("#wave-aim").Change("Gaps");
        Assert.Empty(cut.FindAll("#wave-response"));
        cut.Find("#add-wave").Click();
        Assert.Equal(("maximin", (string?)null), (Analysis.Waves[^1].Criterion, Analysis.Waves[^1].Response));
    }

    [Fact]
    public void A_refused_next_wave_is_a_sentence_and_readers_without_the_lead_role_get_no_wave_panel()
    {
        Serve();
        Analysis.Wave = Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("kind", "Analysis 5 has no surrogate of any response yet."));
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        cut.Find("#add-wave").Click();
        Assert.Equal(("infill", 4, "expectedImprovement"), (Analysis.Waves[0].Kind, Analysis.Waves[0].Count, Analysis.Waves[0].Criterion));
        Assert.Equal("Analysis 5 has no surrogate of any response yet.", cut.Find(".next-wave .notice-error").TextContent);

        Serve(StudyRole.Analyst);
        var analyst = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Empty(analyst.FindAll(".next-wave"));
    }

    [Fact]
    public void Without_candidates_the_page_gives_the_searchs_reason()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        Catalog.Study = Outcome<StudyDetail>.Ok(study);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(SampleAnalysis.Snapshot(study, runs, candidateCount: 0) with
        {
            CandidateNotes = ["No response has a goal or a limit, so there is nothing to rank designs by; give a response a goal in the study's set-up."],
        });
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("give a response a goal", cut.Find("[aria-label=Candidates]").TextContent, StringComparison.Ordinal);
        Assert.DoesNotContain("No candidates yet", cut.Find("[aria-label=Candidates]").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void Without_candidates_the_page_says_when_they_come()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        Catalog.Study = Outcome<StudyDetail>.Ok(study);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(SampleAnalysis.Snapshot(study, runs, candidateCount: 0));
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("No candidates yet", cut.Find("[aria-label=Candidates]").TextContent, StringComparison.Ordinal);
        Assert.Empty(cut.FindAll(".pareto"));
        Assert.NotNull(cut.Find(".caution-note"));
    }
}
