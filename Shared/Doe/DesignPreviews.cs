using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>The answer of <c>POST /api/designs/preview</c>: the runs a design request gives, with its quality
/// figures, warnings and layout, computed by the same <see cref="DesignBuilder"/> that study creation uses.
/// Nothing is stored.</summary>
public static class DesignPreviews
{
    public static Outcome<DesignPreview> Preview(DesignPreviewRequest? request, DesignLimits? limits = null)
    {
        if (request is null)
        {
            var errors = new ValidationErrors();
            errors.Add("body", "The request needs a JSON body with factors and design.");
            return Outcome<DesignPreview>.Invalid(errors);
        }
        var space = FactorSpace.Create(request.Factors);
        if (!space.IsValid) return Outcome<DesignPreview>.Invalid(space.Errors);
        var built = DesignBuilder.Build(space.Value!, request.Design, limits);
        if (!built.IsOk) return built.As<DesignPreview>();

        var design = built.Value!;
        var metrics = DesignMetrics.Evaluate(design.Matrix, design.Model);
        var runs = design.Matrix.NaturalRows().Select(r => new PreviewRun(space.Value!.ToValues(r))).ToList();
        return Outcome<DesignPreview>.Ok(new DesignPreview(
            design.Method,
            runs,
            metrics,
            design.StaysInsideRanges,
            [.. design.Notes, DesignMetrics.Describe(metrics)],
            design.Warnings,
            design.ConstraintViolations,
            design.Fraction,
            design.Composite));
    }
}
