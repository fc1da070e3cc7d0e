using System.Globalization;

namespace Runfold.Shared.Studies;

/// <summary>A validated response of a study.</summary>
public sealed record Response(int Position, string Name, ResponseGoal Goal, double? Target, double? Lower, double? Upper,
    double Weight, string? Unit, bool Noisy)
{
    public ResponseSpec ToSpec() => new(Name, Goal, Target, Lower, Upper, Weight, Unit, Noisy);
}

/// <summary>The validated responses of a study, in order.</summary>
public sealed class ResponseSet
{
    public const int MaxResponses = 30;

    private ResponseSet(IReadOnlyList<Response> responses) => Responses = responses;

    public IReadOnlyList<Response> Responses { get; }

    public int Count => Responses.Count;

    public Response this[int index] => Responses[index];

    public int IndexOf(string name)
    {
        for (var i = 0; i < Responses.Count; i++)
            if (string.Equals(Responses[i].Name, name, StringComparison.OrdinalIgnoreCase)) return i;
        return -1;
    }

    public IReadOnlyList<ResponseSpec> ToSpecs() => [.. Responses.Select(r => r.ToSpec())];

    public static Validated<ResponseSet> Create(IReadOnlyList<ResponseSpec>? specs, FactorSpace? factors, string field = "responses")
    {
        var errors = new ValidationErrors();
        if (specs is null || specs.Count == 0)
        {
            errors.Add(field, "A study needs at least one response.");
            return Validated<ResponseSet>.Fail(errors);
        }
        if (specs.Count > MaxResponses)
            errors.Add(field, $"A study can have at most {MaxResponses} responses; this one has {specs.Count}.");

        var seen = new HashSet<string>(StringComparer.OrdinalIgnoreCase);
        for (var i = 0; i < specs.Count; i++)
        {
            var spec = specs[i];
            var at = $"{field}[{i}]";
            if (spec is null)
            {
                errors.Add(at, "This response is empty.");
                continue;
            }
            FactorSpace.CheckName(spec.Name, $"{at}.name", "response", errors);
            if (!string.IsNullOrWhiteSpace(spec.Name))
            {
                if (!seen.Add(spec.Name))
                    errors.Add($"{at}.name", $"Two responses are named '{spec.Name}'; response names must be unique.");
                if (factors is not null && factors.IndexOf(spec.Name) >= 0)
                    errors.Add($"{at}.name", $"'{spec.Name}' is already a factor; a response needs a name of its own.");
            }
            CheckResponse(spec, at, errors);
        }
        if (!errors.IsEmpty) return Validated<ResponseSet>.Fail(errors);
        return Validated<ResponseSet>.Ok(new ResponseSet([.. specs.Select((s, i) => new Response(
            i, s.Name, s.Goal, s.Target, s.Lower, s.Upper, s.Weight ?? 1.0,
            string.IsNullOrWhiteSpace(s.Unit) ? null : s.Unit.Trim(), s.Noisy))]));
    }

    private static void CheckResponse(ResponseSpec spec, string at, ValidationErrors errors)
    {
        if (!Enum.IsDefined(spec.Goal))
            errors.Add($"{at}.goal", "The goal must be minimize, maximize, target, range or none.");
        CheckFinite(spec.Target, $"{at}.target", errors);
        CheckFinite(spec.Lower, $"{at}.lower", errors);
        CheckFinite(spec.Upper, $"{at}.upper", errors);
        if (spec.Weight is { } w && (!double.IsFinite(w) || w <= 0))
            errors.Add($"{at}.weight", "The weight must be a positive number.");
        if (spec.Lower is { } lo && spec.Upper is { } hi && double.IsFinite(lo) && double.IsFinite(hi) && lo >= hi)
            errors.Add($"{at}.upper", string.Create(CultureInfo.InvariantCulture,
                $"The upper limit of '{spec.Name}' ({hi}) must be greater than its lower limit ({lo})."));
        switch (spec.Goal)
        {
            case ResponseGoal.Target when spec.Target is null:
                errors.Add($"{at}.target", $"The goal 'target' needs a target value for '{spec.Name}'.");
                break;
            case ResponseGoal.Target when spec.Target is { } t && double.IsFinite(t)
                                          && ((spec.Lower is { } l && t < l) || (spec.Upper is { } u && t > u)):
                errors.Add($"{at}.target", $"The target of '{spec.Name}' lies outside its limits.");
                break;
            case ResponseGoal.Range when spec.Lower is null || spec.Upper is null:
                errors.Add($"{at}.lower", $"The goal 'range' needs both a lower and an upper value for '{spec.Name}'.");
                break;
        }
    }

    private static void CheckFinite(double? value, string field, ValidationErrors errors)
    {
        if (value is { } v && !double.IsFinite(v)) errors.Add(field, "This must be a finite number.");
    }
}
