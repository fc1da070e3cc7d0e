using Plotly.Blazor.Traces;
using Runfold.Client.Components.Analysis;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Client.Tests.Analysis;

/// <summary>The pure pieces behind the analysis pages: number formats, the Pareto front of a pair, the surface
/// grid, candidate badges and the chart builders.</summary>
public sealed class AnalysisHelpersTests
{
    [Theory]
    [InlineData(0.41234, 0.01789, "K/W", "0.412 ± 0.018 K/W")]
    [InlineData(851.4, 153, "g", "850 ± 150 g")]
    [InlineData(99.53, 8.457, "Pa", "99.5 ± 8.5 Pa")]
    [InlineData(1234.56, 0.5, null, "1,234.56 ± 0.50")]
    [InlineData(-0.0731, 0.00244, null, "-0.0731 ± 0.0024")]
    [InlineData(0.19019, 0.000001, "K/W", "0.1902 ± 1e-6 K/W")]
    [InlineData(611.34, 0.0021, "g", "611.3 ± 0.0021 g")]
    public void A_prediction_shows_its_sd_to_two_significant_digits_and_the_mean_to_the_same_place_unless_the_sd_is_negligible(double mean, double sd, string? unit, string expected) =>
        Assert.Equal(expected, AnalysisText.Predicted(new PredictedValueDto(mean, sd), unit));

    [Fact]
    public void A_prediction_without_spread_shows_the_mean_alone() =>
        Assert.Equal("0.4123 K/W", AnalysisText.Predicted(new PredictedValueDto(0.41234, null), "K/W"));

    [Theory]
    [InlineData(0.97, "97 %")]
    [InlineData(0.004, "0.4 %")]
    [InlineData(1.0, "100 %")]
    [InlineData(0.0271, "2.7 %")]
    public void Fractions_read_as_percentages(double fraction, string expected) => Assert.Equal(expected, AnalysisText.Percent(fraction));

    [Theory]
    [InlineData(0.4, "just now")]
    [InlineData(12, "12 s ago")]
    [InlineData(240, "4 min ago")]
    [InlineData(3 * 3600 + 5, "3 h ago")]
    [InlineData(3 * 86400, "3 d ago")]
    public void Ages_read_in_the_largest_whole_unit(double seconds, string expected) => Assert.Equal(expected, AnalysisText.Ago(TimeSpan.FromSeconds(seconds)));

    [Fact]
    public void Limits_read_as_inequalities_with_units()
    {
        Assert.Equal("≤ 60 Pa", AnalysisText.Limit(new ResponseSpec("pressure_drop", ResponseGoal.Minimize, Upper: 60, Unit: "Pa")));
        Assert.Equal("≥ 5 W", AnalysisText.Limit(new ResponseSpec("power", ResponseGoal.Maximize, Lower: 5, Unit: "W")));
        Assert.Equal("within 2 – 4 mm", AnalysisText.Limit(new ResponseSpec("gap", ResponseGoal.Range, Lower: 2, Upper: 4, Unit: "mm")));
        Assert.Null(AnalysisText.Limit(new ResponseSpec("mass", ResponseGoal.Minimize)));
    }

    [Fact]
    public void The_front_of_a_pair_keeps_exactly_the_points_no_other_point_beats_on_both()
    {
        (double, double)[] costs = [(1, 9), (2, 7), (3, 8), (4, 3), (5, 3), (6, 1), (2, 7), (double.NaN, 0), (7, 2)];
        // (3, 8) is beaten by (2, 7); (5, 3) by (4, 3); the second (2, 7) equals the first; (7, 2) by (6, 1); NaN is no point.
        Assert.Equal([0, 1, 3, 5], ParetoFront.Indices(costs));
    }

    [Fact]
    public void Goals_turn_values_into_costs_to_minimise()
    {
        Assert.Equal(-3, ParetoFront.Cost(new ResponseSpec("y", ResponseGoal.Maximize), 3));
        Assert.Equal(2, ParetoFront.Cost(new ResponseSpec("y", ResponseGoal.Target, Target: 5), 3));
        Assert.Equal(0, ParetoFront.Cost(new ResponseSpec("y", ResponseGoal.Range, Lower: 2, Upper: 4), 3));
        Assert.Equal(1.5, ParetoFront.Cost(new ResponseSpec("y", ResponseGoal.Range, Lower: 2, Upper: 4), 5.5));
        Assert.Equal(0, ParetoFront.Cost(new ResponseSpec("y", ResponseGoal.None), 3));
    }

    [Fact]
    public void Grid_axes_step_geometrically_on_a_log_scale_and_by_whole_numbers_for_integers()
    {
        var log = SurfaceGrid.Axis(new FactorSpec("reynolds", FactorKind.Continuous, 100, 10000, Scale: FactorScale.Log), 5);
        Assert.Equal([100, 316.228, 1000, 3162.278, 10000], log.Select(v => Math.Round(v, 3)));
        var integer = SurfaceGrid.Axis(new FactorSpec("fin_count", FactorKind.Integer, 10, 20), SurfaceGrid.Steps);
        Assert.Equal(Enumerable.Range(10, 11).Select(i => (double)i), integer);
    }

    [Fact]
    public void The_grid_goes_out_row_by_row_and_comes_back_as_rows_over_y()
    {
        var held = new Dictionary<string, FactorValue> { ["fin_shape"] = FactorValue.OfLevel("pin") };
        var grid = SurfaceGrid.Create(new FactorSpec("x", FactorKind.Continuous, 0, 1), new FactorSpec("y", FactorKind.Continuous, 10, 20), held, steps: 3);
        var points = grid.Request().Points;
        Assert.Equal(9, points.Count);
        Assert.Equal((0.5, 10.0), (points[1]["x"].Number, points[1]["y"].Number));
        Assert.Equal((0.0, 15.0), (points[3]["x"].Number, points[3]["y"].Number));
        Assert.All(points, p => Assert.Equal("pin", p["fin_shape"].Level));

        var answers = points.Select(p => (IReadOnlyDictionary<string, PredictedValueDto>)new Dictionary<string, PredictedValueDto>
        {
            ["r"] = new(p["x"].Number + p["y"].Number, null),
        }).ToList();
        var (mean, sd) = grid.Read(answers, "r");
        Assert.Equal(15.5, mean[1][1]);
        Assert.Equal(21, mean[2][2]);
        Assert.True(double.IsNaN(sd[0][0]));
        Assert.Throws<ArgumentException>(() => grid.Read(answers.Take(8).ToList(), "r"));
    }

    [Fact]
    public void Slider_positions_map_to_natural_values_and_back()
    {
        var log = new FactorSpec("k", FactorKind.Continuous, 1, 100, Scale: FactorScale.Log);
        Assert.Equal(10, FactorPosition.Natural(log, 0.5), 9);
        Assert.Equal(0.5, FactorPosition.Position(log, 10), 9);
        var count = new FactorSpec("fin_count", FactorKind.Integer, 10, 40);
        Assert.Equal(25, FactorPosition.Natural(count, 0.5));
        Assert.Equal(0, FactorPosition.Position(count, 2)); // below the range: clamped
        Assert.Equal("straight", FactorPosition.Centre(new FactorSpec("shape", FactorKind.Categorical, Levels: ["straight", "pin"])).Level);
    }

    [Fact]
    public void A_candidate_stands_where_its_verification_run_says()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        var candidates = SampleAnalysis.Snapshot(study, runs).Candidates;
        Assert.Equal(
            [VerificationStage.Verified, VerificationStage.Verifying, VerificationStage.Disagrees, VerificationStage.Unverified],
            candidates.Take(4).Select(CandidateStatus.Stage));
        var failed = candidates[1] with { Verification = candidates[1].Verification! with { State = RunState.Failed } };
        Assert.Equal(VerificationStage.RunFailed, CandidateStatus.Stage(failed));
        Assert.Equal(["extrapolating", "unverified"], CandidateStatus.Badges(candidates[3]).Select(b => b.Word));
    }

    [Fact]
    public void The_pareto_scatter_draws_the_front_of_the_chosen_pair_and_the_limit()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        var candidates = SampleAnalysis.Snapshot(study, runs).Candidates;
        var (first, second) = (study.Responses[0], study.Responses[1]);
        var (data, layout) = CandidatePlots.Pareto(candidates, first, second, selectedRank: 2);
        var expected = ParetoFront.Indices([.. candidates.Select(c => (c.Predicted[first.Name].Mean, c.Predicted[second.Name].Mean))])
            .Select(i => candidates[i].Predicted[first.Name].Mean).ToList();
        var front = (Scatter)data[0];
        Assert.Equal(expected.Cast<object>(), front.X);
        Assert.Equal(expected.Count, ((Scatter)data[2]).X.Count);
        Assert.Equal(candidates.Count, ((Scatter)data[1]).X.Count + ((Scatter)data[2]).X.Count);
        Assert.Equal("candidate 2", ((Scatter)data[^1]).Name);
        var limit = Assert.Single(layout.Shapes);
        Assert.Equal((60.0, 60.0, "paper"), ((double)limit.Y0, (double)limit.Y1, limit.XRef));
    }

    [Fact]
    public void Parallel_coordinates_scale_every_axis_to_zero_to_one_and_draw_the_selection_last()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        var candidates = SampleAnalysis.Snapshot(study, runs).Candidates;
        var (data, layout) = CandidatePlots.ParallelCoordinates(candidates, study.Factors, study.Responses, selectedRank: 3);
        Assert.Equal(candidates.Count, data.Count);
        Assert.All(data.Cast<Scatter>(), s => Assert.All(s.Y, y => Assert.InRange((double)y, 0, 1)));
        Assert.Equal("candidate 3", ((Scatter)data[^1]).Name);
        Assert.Equal(study.Factors.Count + study.Responses.Count + 1, layout.XAxis[0].TickVals.Count);
    }

    [Fact]
    public void The_fit_check_puts_y_equals_x_across_equal_axes()
    {
        var check = new FitCheckDto([1, 2, 3], [1.0, 2.0, 4.0], [1.5, 1.8, 3.0], [-0.5, 0.2, 1.0], "leave-one-out");
        var (data, layout) = ModelPlots.PredictedVsObserved(check, "K/W");
        var line = (Scatter)data[0];
        Assert.Equal(line.X, line.Y);
        Assert.Equal(layout.XAxis[0].Range, layout.YAxis[0].Range);
        Assert.Equal(0.85, (double)layout.XAxis[0].Range[0], 9); // 1 − 5 % of the span 1…4
        Assert.Equal("observed [K/W]", layout.XAxis[0].Title.Text);
    }

    [Fact]
    public void The_trend_sentence_names_how_far_the_best_desirability_moved()
    {
        AnalysisHistoryPointDto Point(int runs, double best) => new(runs, runs, SampleAnalysis.At, best, new Dictionary<string, double>());
        Assert.Null(ConvergencePlots.Trend([Point(12, 0.7)]));
        Assert.Equal("With 4 more runs, the best desirability moved from 0.7 to 0.82.", ConvergencePlots.Trend([Point(12, 0.7), Point(16, 0.82)]));
        Assert.Equal("With 1 more run, the best desirability stayed at 0.821.", ConvergencePlots.Trend([Point(16, 0.82), Point(17, 0.821)]));
    }
}
