using Bunit;
using Bunit.TestDoubles;
using Microsoft.AspNetCore.Components;
using Microsoft.Extensions.DependencyInjection;
using Runfold.Client.Components.Setup;
using Runfold.Client.Pages;
using Runfold.Client.Setup;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Client.Tests;

/// <summary>The set-up page and its preview with a fake <see cref="IStudySetup"/>: loading, data, error and empty
/// states, field errors next to their fields, and creation landing on the new study.</summary>
public sealed class StudySetupTests : BunitContext
{
    private static readonly FactorSpec[] TwoFactors =
    [
        new("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"),
        new("fin_count", FactorKind.Integer, 10, 40),
    ];

    public StudySetupTests() => JSInterop.Mode = JSRuntimeMode.Loose; // Plotly.Blazor's interop

    private static DesignPreview Preview(params ConstraintViolation[] violations) =>
        DesignPreviews.Preview(new DesignPreviewRequest(TwoFactors, new DesignSpec(DesignMethod.FullFactorial, Levels: [2]))).Value! with
        {
            ConstraintViolations = violations,
        };

    [Fact]
    public void The_preview_panel_says_what_to_do_with_no_factors()
    {
        var cut = Render<DesignPreviewPanel>(p => p.Add(c => c.Factors, []));
        Assert.Contains("Add a factor", cut.Find(".empty").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void The_preview_panel_shows_loading_until_the_first_preview()
    {
        var cut = Render<DesignPreviewPanel>(p => p.Add(c => c.Factors, TwoFactors));
        Assert.Contains("Working out the runs", cut.Markup, StringComparison.Ordinal);
    }

    [Fact]
    public void The_preview_panel_lists_the_problems_that_keep_a_preview_from_being_made()
    {
        var cut = Render<DesignPreviewPanel>(p => p.Add(c => c.Factors, TwoFactors)
            .Add(c => c.Problems, ["This design needs 1,000,000 runs, more than the limit of 10,000."]));
        Assert.Contains("more than the limit", cut.Find(".preview-problems").TextContent, StringComparison.Ordinal);
        Assert.Empty(cut.FindAll(".scatter-matrix"));
    }

    [Fact]
    public void The_preview_panel_shows_runs_levels_metrics_a_scatter_matrix_and_constraint_breaks()
    {
        var cut = Render<DesignPreviewPanel>(p => p.Add(c => c.Factors, TwoFactors)
            .Add(c => c.Preview, Preview(new ConstraintViolation(4, ["fin_height + fin_count <= 90"]))));
        Assert.Equal("4", cut.Find("#preview-runs").TextContent); // 2 × 2 full factorial
        var levels = cut.FindAll("table.levels tbody tr");
        Assert.Equal(2, levels.Count);
        Assert.Contains("2", levels[0].TextContent, StringComparison.Ordinal);
        Assert.Equal("1", cut.Find("#metric-d-efficiency").TextContent.Split(' ')[0].Trim()); // orthogonal, linear model
        Assert.Contains("run 4: fin_height + fin_count <= 90", cut.Find(".preview-warnings").TextContent, StringComparison.Ordinal);
        Assert.Equal("Scatter matrix of 4 runs over 2 factors", cut.Find(".scatter-matrix").GetAttribute("aria-label"));
    }

    [Fact]
    public void The_page_starts_from_the_heat_sink_example_and_previews_it()
    {
        var setup = new FakeSetup();
        Services.AddSingleton<IStudySetup>(setup);
        var cut = Render<StudySetupPage>();
        cut.WaitForAssertion(() => Assert.Equal("40", cut.Find("#preview-runs").TextContent));
        Assert.Equal("fin_height", cut.Find("#factors\\[0\\]\\.name").GetAttribute("value"));
        Assert.Equal(5, setup.LastPreview!.Factors.Count);
        Assert.Equal(DesignMethod.LatinHypercube, setup.LastPreview.Design.Method);
        Assert.Equal("Create study with 40 runs", cut.Find("#create-study").TextContent.Trim());
    }

    [Fact]
    public void A_field_that_is_not_a_number_is_named_next_to_it_and_the_preview_waits()
    {
        Services.AddSingleton<IStudySetup>(new FakeSetup());
        var cut = Render<StudySetupPage>();
        cut.WaitForAssertion(() => cut.Find("#preview-runs"));
        cut.Find("#factors\\[1\\]\\.low").Input("0,8");
        cut.WaitForAssertion(() => Assert.Contains("write decimals with a point", cut.Find("[data-field='factors[1].low']").TextContent, StringComparison.Ordinal));
        Assert.Contains("'0,8' is not a number", cut.Find(".preview-problems").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void Errors_from_the_server_appear_next_to_the_field_they_name()
    {
        var setup = new FakeSetup { PreviewAnswer = Outcome<DesignPreview>.Invalid(ValidationErrors.Single("design.runs", "A design needs at least one run.")) };
        Services.AddSingleton<IStudySetup>(setup);
        var cut = Render<StudySetupPage>();
        cut.WaitForAssertion(() => Assert.Contains("at least one run", cut.Find("[data-field='design.runs']").TextContent, StringComparison.Ordinal));
        Assert.Contains("at least one run", cut.Find(".preview-problems").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void Creating_the_study_lands_on_its_page_and_a_refusal_is_a_sentence()
    {
        var setup = new FakeSetup();
        Services.AddSingleton<IStudySetup>(setup);
        var navigation = Services.GetRequiredService<NavigationManager>();
        var cut = Render<StudySetupPage>();
        cut.WaitForAssertion(() => cut.Find("#preview-runs"));

        setup.CreateAnswer = Outcome<StudyDetail>.Invalid(ValidationErrors.Single("name", "The study needs a name."));
        cut.Find("#create-study").Click();
        cut.WaitForAssertion(() => Assert.Contains("needs a name", cut.Find("[data-field='name']").TextContent, StringComparison.Ordinal));
        Assert.Contains("needs a name", cut.Find("#create-error").TextContent, StringComparison.Ordinal);

        setup.CreateAnswer = null;
        cut.Find("#name").Input("Heat sink, second round");
        cut.Find("#create-study").Click();
        cut.WaitForAssertion(() => Assert.EndsWith("/studies/42", navigation.Uri, StringComparison.Ordinal));
        Assert.Equal("Heat sink, second round", setup.Created!.Name);
        Assert.Equal(3, setup.Created.Responses.Count);
        Assert.Equal(60, setup.Created.Responses[1].Upper);
    }

    [Fact]
    public void Someone_who_may_not_create_sees_why_and_cannot_press_create()
    {
        Services.AddSingleton<IStudySetup>(new FakeSetup { MayCreate = false });
        var cut = Render<StudySetupPage>();
        cut.WaitForAssertion(() => Assert.Contains("Only the admin creates studies", cut.Find(".notice-error").TextContent, StringComparison.Ordinal));
        Assert.True(cut.Find("#create-study").HasAttribute("disabled"));
    }

    [Fact]
    public void The_design_editor_shows_only_the_knobs_the_method_reads()
    {
        var draft = new DesignDraft { Method = DesignMethod.CentralComposite };
        var cut = Render<DesignEditor>(p => p.Add(c => c.Design, draft));
        Assert.NotNull(cut.Find("#design\\.variant"));
        Assert.NotNull(cut.Find("#design\\.centerPoints"));
        Assert.Empty(cut.FindAll("#design\\.runs"));
        Assert.Empty(cut.FindAll("#design\\.seed"));
    }

    [Fact]
    public void Error_keys_of_items_belong_to_their_field_and_unknown_keys_are_not_lost()
    {
        var errors = new Dictionary<string, string[]>
        {
            ["design.constraints[1]"] = ["Unknown factor 'fin_heigth'."],
            ["design.constraintsExtra"] = ["x"],
            ["body"] = ["The request needs a JSON body."],
        };
        Assert.Equal(["Unknown factor 'fin_heigth'."], ErrorKeys.For(errors, "design.constraints"));
        Assert.Equal(["x", "The request needs a JSON body."], ErrorKeys.Unplaced(errors, ["design.constraints"]));
    }

    private sealed class FakeSetup : IStudySetup
    {
        public bool MayCreate { get; init; } = true;

        public Outcome<DesignPreview>? PreviewAnswer { get; init; }

        public Outcome<StudyDetail>? CreateAnswer { get; set; }

        public DesignPreviewRequest? LastPreview { get; private set; }

        public CreateStudyRequest? Created { get; private set; }

        public Task<bool> CanCreateAsync(CancellationToken cancellationToken = default) => Task.FromResult(MayCreate);

        public Task<Outcome<DesignPreview>> PreviewAsync(DesignPreviewRequest request, CancellationToken cancellationToken = default)
        {
            LastPreview = request;
            return Task.FromResult(PreviewAnswer ?? DesignPreviews.Preview(request));
        }

        public Task<Outcome<StudyDetail>> CreateAsync(CreateStudyRequest request, CancellationToken cancellationToken = default)
        {
            Created = request;
            return Task.FromResult(CreateAnswer ?? Outcome<StudyDetail>.Ok(new StudyDetail(42, request.Name, null, request.Factors, request.Responses,
                request.Design, RunCounts.Empty, [], 24, DateTimeOffset.UnixEpoch)));
        }
    }
}
