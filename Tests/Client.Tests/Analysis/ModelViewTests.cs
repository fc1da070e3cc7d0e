using Bunit;
using Runfold.Client.Components.Analysis;
using Runfold.Client.Pages;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Client.Tests.Analysis;

/// <summary>The model page: the model chosen per response and why, the fit check, a response without a model, and
/// the surface explorer's one prediction request per grid.</summary>
public sealed class ModelViewTests : AnalysisTestContext
{
    [Fact]
    public void Each_response_shows_its_model_in_words_why_it_was_chosen_and_its_scores_with_units()
    {
        var (_, snapshot) = Serve();
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        var summary = cut.Find(".model-summary");
        Assert.Contains("Gaussian process (kriging)", summary.QuerySelector(".model-kind")!.TextContent, StringComparison.Ordinal);
        Assert.Equal(snapshot.Responses[0].Model!.Reason, summary.QuerySelector(".model-reason")!.TextContent);
        Assert.Contains("K/W", summary.QuerySelector(".metric-tiles")!.TextContent, StringComparison.Ordinal);
        Assert.Contains("predicts well", summary.QuerySelector(".fit-good")!.TextContent, StringComparison.Ordinal);
        Assert.Equal(4, summary.QuerySelectorAll(".compared tbody tr").Length);
        Assert.Contains("chosen", summary.QuerySelector(".compared tr.chosen")!.TextContent, StringComparison.Ordinal);
        Assert.Contains("leave-one-out", cut.Find(".fit-check").TextContent, StringComparison.Ordinal);

        cut.FindAll(".response-picker button")[1].Click();
        Assert.Contains("quadratic response surface", cut.Find(".model-summary .model-kind").TextContent, StringComparison.Ordinal);
        Assert.Contains("fitted to its logarithm", cut.Find(".model-summary").TextContent, StringComparison.Ordinal);
        Assert.Equal("true", cut.FindAll(".response-picker button")[1].GetAttribute("aria-pressed"));
    }

    [Fact]
    public void Of_several_kernels_compared_only_the_chosen_one_is_marked_and_each_says_which_it_is()
    {
        var (study, snapshot) = Serve();
        var first = snapshot.Responses[0];
        var compared = new List<ModelScoreDto>
        {
            new("gaussianProcess", "Gaussian process, squared-exponential kernel, constant trend", 0.019, 0.96),
            new("gaussianProcess", "Gaussian process, Matérn 5/2 kernel, constant trend", 0.015, 0.98),
            new("gaussianProcess", "Gaussian process, Matérn 3/2 kernel, constant trend", 0.018, 0.97),
            new("rbf", "radial basis functions, cubic kernel, linear tail", 0.032, 0.90),
        };
        var model = first.Model! with { Kind = "gaussianProcess", Description = "Gaussian process, Matérn 5/2 kernel, constant trend", Compared = compared };
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(snapshot with { Responses = [first with { Model = model }, .. snapshot.Responses.Skip(1)] });
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        var chosen = Assert.Single(cut.FindAll(".compared tbody tr.chosen"));
        Assert.Contains("Matérn 5/2 kernel", chosen.TextContent, StringComparison.Ordinal);
        Assert.Equal(4, cut.FindAll(".compared .model-detail").Count);
        _ = study;
    }

    [Fact]
    public void A_response_without_a_model_says_why_and_how_many_runs_are_still_needed()
    {
        var (study, runs) = SampleAnalysis.HeatSink(done: 3);
        Catalog.Study = Outcome<StudyDetail>.Ok(study);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(SampleAnalysis.Snapshot(study, runs));
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("The first models need 2 more done runs.", cut.Find(".notice-warn").TextContent, StringComparison.Ordinal);
        var empty = cut.Find(".empty-state");
        Assert.Contains("No model for thermal_resistance yet", empty.TextContent, StringComparison.Ordinal);
        Assert.Contains("A model needs at least 5 done runs with thermal_resistance; 3 so far.", empty.TextContent, StringComparison.Ordinal);
        Assert.Contains("2 more done runs are needed", empty.TextContent, StringComparison.Ordinal);
        Assert.All(cut.FindAll(".response-picker .mark"), m => Assert.Equal("no model yet", m.TextContent));
        Assert.Empty(cut.FindAll(".surface-explorer"));
    }

    [Fact]
    public void The_surface_is_predicted_in_one_request_over_the_two_most_influential_factors_held_at_the_best_candidate()
    {
        var (study, snapshot) = Serve();
        Analysis.Predict = r => FakeAnalysis.Smooth(r, study.Responses);
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));

        var request = Assert.Single(Analysis.Predictions);
        var ranked = snapshot.Responses[0].Sensitivity.OrderByDescending(s => s.Total).Select(s => s.Factor).ToList();
        int Steps(string factor) => SurfaceGrid.Axis(study.Factors.Single(f => f.Name == factor), SurfaceGrid.Steps).Count;
        Assert.Equal(Steps(ranked[0]) * Steps(ranked[1]), request.Points.Count);
        Assert.Equal(ranked[0], cut.Find("#surface-x").GetAttribute("value"));
        Assert.Equal(ranked[1], cut.Find("#surface-y").GetAttribute("value"));
        var best = snapshot.Candidates.Single(c => c.Rank == 1);
        foreach (var held in study.Factors.Select(f => f.Name).Except(ranked.Take(2)))
            Assert.All(request.Points, p => Assert.Equal(best.Factors[held], p[held]));
        Assert.NotEmpty(cut.FindAll(".explorer-chart .analysis-chart"));

        cut.Find("#surface-y").Change(ranked[2]);
        Assert.Equal(2, Analysis.Predictions.Count);
        cut.FindAll(".response-picker button")[2].Click(); // another response: the same grid, no new request
        Assert.Equal(2, Analysis.Predictions.Count);
    }

    [Fact]
    public void The_surface_says_so_while_it_is_computed_and_when_the_server_refuses()
    {
        Serve();
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("Computing the surface", cut.Find(".explorer-chart").TextContent, StringComparison.Ordinal);

        Analysis.Predict = _ => Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>.Unprocessable(
            ValidationErrors.Single("points", "This server does not run the live analysis."));
        cut.Find("#surface-x").Change(cut.FindAll("#surface-x option").Last(o => !o.HasAttribute("disabled")).GetAttribute("value"));
        Assert.Equal("This server does not run the live analysis.", cut.Find(".explorer-chart .notice-error").TextContent);
    }

    [Fact]
    public void A_study_with_one_numeric_factor_has_no_surface_to_explore()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        study = study with { Factors = [study.Factors[0], new FactorSpec("fin_shape", FactorKind.Categorical, Levels: ["straight", "pin"])] };
        Catalog.Study = Outcome<StudyDetail>.Ok(study);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(SampleAnalysis.Snapshot(study, runs));
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("needs two numeric factors; this study has 1", cut.Find(".surface-explorer").TextContent, StringComparison.Ordinal);
        Assert.Empty(Analysis.Predictions);
    }
}
