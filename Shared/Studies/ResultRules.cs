using System.Globalization;

namespace Runfold.Shared.Studies;

/// <summary>A result that passed every check: what an upload stores as a new revision.</summary>
public sealed record CheckedResult(RunState State, IReadOnlyDictionary<string, double> Values, string? Note, double? SolverSeconds)
{
    /// <summary>Same state, values and note: a re-upload of this adds nothing.</summary>
    public bool SameAs(RunState state, IReadOnlyDictionary<string, double> values, string? note) =>
        State == state && string.Equals(Note ?? "", note ?? "", StringComparison.Ordinal)
        && Values.Count == values.Count && Values.All(v => values.TryGetValue(v.Key, out var w) && w.Equals(v.Value));
}

/// <summary>The checks a result must pass against the study's responses before it is stored.</summary>
public static class ResultRules
{
    public const int MaxNoteLength = 4000;

    /// <summary>
    /// <c>done</c> needs a finite number for every response; <c>failed</c> needs a reason in the note and may carry
    /// whatever values were obtained. Unknown response names, NaN, infinity and text are refused, each error keyed
    /// by its field (<c>values.thermal_resistance</c>). Names are matched case-insensitively and stored in the
    /// study's spelling.
    /// </summary>
    public static Validated<CheckedResult> Check(ResponseSet responses, RunState state,
        IEnumerable<KeyValuePair<string, ResultValue>>? values, string? note, double? solverSeconds,
        Func<string, string>? fieldOf = null)
    {
        ArgumentNullException.ThrowIfNull(responses);
        fieldOf ??= name => $"values.{name}";
        var errors = new ValidationErrors();
        if (state is not (RunState.Done or RunState.Failed))
            errors.Add("state", $"A result's state is done or failed, not {Name(state)}.");

        var stored = new Dictionary<string, double>(StringComparer.Ordinal);
        foreach (var (name, value) in values ?? [])
        {
            var index = responses.IndexOf(name);
            if (index < 0)
            {
                errors.Add(fieldOf(name), $"'{name}' is not a response of this study; the responses are {string.Join(", ", responses.Responses.Select(r => r.Name))}.");
                continue;
            }
            var response = responses[index];
            if (stored.ContainsKey(response.Name))
            {
                errors.Add(fieldOf(name), $"'{response.Name}' is given twice.");
                continue;
            }
            if (!value.IsNumber)
                errors.Add(fieldOf(response.Name), $"'{Shorten(value.Text!)}' is not a number; {response.Name} needs a number.");
            else if (double.IsNaN(value.Number))
                errors.Add(fieldOf(response.Name), $"{response.Name} is NaN; give a finite number, or mark the run failed with a reason.");
            else if (double.IsInfinity(value.Number))
                errors.Add(fieldOf(response.Name), $"{response.Name} is infinite; give a finite number, or mark the run failed with a reason.");
            else
                stored[response.Name] = value.Number;
        }
        if (state == RunState.Done)
            foreach (var response in responses.Responses)
                if (!stored.ContainsKey(response.Name) && !errors.ToDictionary().ContainsKey(fieldOf(response.Name)))
                    errors.Add(fieldOf(response.Name), $"{response.Name} is missing; a done run needs a value for every response.");

        var trimmed = string.IsNullOrWhiteSpace(note) ? null : note.Trim();
        if (trimmed is { Length: > MaxNoteLength })
            errors.Add("note", $"The note is longer than {MaxNoteLength} characters.");
        if (state == RunState.Failed && trimmed is null)
            errors.Add("note", "A failed run needs the reason in the note (for example 'solver diverged at iteration 800').");
        if (solverSeconds is { } s && (!double.IsFinite(s) || s < 0))
            errors.Add("solverSeconds", "The solver time must be a non-negative number of seconds.");

        return errors.IsEmpty
            ? Validated<CheckedResult>.Ok(new CheckedResult(state, stored, trimmed, solverSeconds))
            : Validated<CheckedResult>.Fail(errors);
    }

    /// <summary>The lease length a claim asks for, or the reason it cannot have it.</summary>
    public static string? CheckLeaseHours(double? hours) => hours switch
    {
        null => null,
        { } h when !double.IsFinite(h) || h <= 0 => "The lease must be a positive number of hours.",
        > MaxLeaseHours => string.Create(CultureInfo.InvariantCulture, $"A lease can last at most {MaxLeaseHours} hours (a week); heartbeat to extend it."),
        _ => null,
    };

    public const double MaxLeaseHours = 168;

    public const int MaxClaimCount = 500;

    private static string Name(RunState state) => state.ToString().ToLowerInvariant();

    private static string Shorten(string text) => text.Length <= 40 ? text : text[..40] + "…";
}
