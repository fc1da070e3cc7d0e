using System.Globalization;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>
/// The one entry point from a design request (DESIGN.md §5 <c>Design</c>) to a design matrix: checks the
/// request against the factor space and the limits, then calls the method's generator.
/// </summary>
public static class DesignBuilder
{
    public static Validated<GeneratedDesign> Build(FactorSpace space, DesignSpec? spec, DesignLimits? limits = null)
    {
        ArgumentNullException.ThrowIfNull(space);
        limits ??= DesignLimits.Default;
        if (spec is null) return Validated<GeneratedDesign>.Fail("design", "The study needs a design, for example {\"method\": \"fullFactorial\"}.");
        return spec.Method switch
        {
            DesignMethod.FullFactorial => BuildFullFactorial(space, spec, limits),
            _ => Validated<GeneratedDesign>.Fail("design.method",
                $"The design method '{spec.Method}' is not available yet; use fullFactorial."),
        };
    }

    private static Validated<GeneratedDesign> BuildFullFactorial(FactorSpace space, DesignSpec spec, DesignLimits limits)
    {
        var errors = new ValidationErrors();
        var levels = FullFactorial.DefaultLevels(space);
        if (spec.Levels is { Count: > 0 } asked)
        {
            if (asked.Count != 1 && asked.Count != space.Count)
            {
                errors.Add("design.levels", $"Give one level count for all factors or one per factor ({space.Count}); {asked.Count} were given.");
                return Validated<GeneratedDesign>.Fail(errors);
            }
            for (var j = 0; j < space.Count; j++)
            {
                var factor = space[j];
                if (asked.Count == 1 && factor.IsCategorical) continue; // one count applies to the numeric factors
                var l = asked.Count == 1 ? asked[0] : asked[j];
                var field = asked.Count == 1 ? "design.levels" : $"design.levels[{j}]";
                if (l < 2)
                    errors.Add(field, $"'{factor.Name}' needs at least 2 levels in a full factorial; {l} was given.");
                else if (factor.IsCategorical && l != factor.Levels.Count)
                    errors.Add(field, $"The categorical factor '{factor.Name}' has {factor.Levels.Count} levels; a full factorial uses all of them.");
                else if (factor.Kind == FactorKind.Integer && l > factor.High - factor.Low + 1)
                    errors.Add(field, string.Create(CultureInfo.InvariantCulture,
                        $"The integer factor '{factor.Name}' has only {factor.High - factor.Low + 1} whole values between {factor.Low} and {factor.High}; {l} levels cannot be distinct."));
                else levels[j] = l;
            }
        }
        if (!errors.IsEmpty) return Validated<GeneratedDesign>.Fail(errors);

        var runs = FullFactorial.RunCount(levels);
        if (runs > limits.MaxRuns)
            return Validated<GeneratedDesign>.Fail("design", TooManyRuns(runs, limits, "a fractional factorial or a space-filling design (latinHypercube, sobol)"));

        var matrix = FullFactorial.Generate(space, levels);
        return Validated<GeneratedDesign>.Ok(new GeneratedDesign(matrix, DesignMethod.FullFactorial,
            [$"Full factorial {string.Join(" × ", levels)} = {matrix.RunCount} runs."]));
    }

    /// <summary>The refusal sentence for a design over the limit, with the count it would need.</summary>
    public static string TooManyRuns(double runs, DesignLimits limits, string suggestion)
    {
        ArgumentNullException.ThrowIfNull(limits);
        var count = runs < 1e15 ? runs.ToString("N0", CultureInfo.InvariantCulture) : runs.ToString("0.###e+0", CultureInfo.InvariantCulture);
        return $"This design needs {count} runs, more than the limit of {limits.MaxRuns.ToString("N0", CultureInfo.InvariantCulture)}. Use {suggestion}, or fewer levels.";
    }
}
