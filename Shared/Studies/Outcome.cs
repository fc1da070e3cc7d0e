namespace Runfold.Shared.Studies;

/// <summary>How an operation ended, in terms both the HTTP API and the pages can show.</summary>
public enum OutcomeKind
{
    Ok,
    /// <summary>Nothing by that id is visible to the caller.</summary>
    NotFound,
    /// <summary>The caller's role does not allow it.</summary>
    Forbidden,
    /// <summary>The request itself is malformed or a field is invalid (HTTP 400).</summary>
    Invalid,
    /// <summary>The request is well formed but cannot be carried out against the study as it is (HTTP 422).</summary>
    Unprocessable,
    /// <summary>The state changed under the caller (HTTP 409), e.g. the claim is no longer theirs.</summary>
    Conflict,
}

/// <summary>A value, or the reason there is none as a sentence (and, for validation, field errors).</summary>
public sealed record Outcome<T>(OutcomeKind Kind, T? Value, string? Message, IReadOnlyDictionary<string, string[]>? Errors)
{
    public bool IsOk => Kind == OutcomeKind.Ok;

    public static Outcome<T> Ok(T value) => new(OutcomeKind.Ok, value, null, null);

    public static Outcome<T> NotFound(string message) => new(OutcomeKind.NotFound, default, message, null);

    public static Outcome<T> Forbidden(string message) => new(OutcomeKind.Forbidden, default, message, null);

    public static Outcome<T> Conflict(string message) => new(OutcomeKind.Conflict, default, message, null);

    public static Outcome<T> Invalid(ValidationErrors errors, string? message = null) =>
        From(OutcomeKind.Invalid, errors, message);

    public static Outcome<T> Unprocessable(ValidationErrors errors, string? message = null) =>
        From(OutcomeKind.Unprocessable, errors, message);

    /// <summary>Carries a failure over to another value type.</summary>
    public Outcome<TOther> As<TOther>() => IsOk
        ? throw new InvalidOperationException("Only a failed outcome can change its value type.")
        : new Outcome<TOther>(Kind, default, Message, Errors);

    private static Outcome<T> From(OutcomeKind kind, ValidationErrors errors, string? message)
    {
        ArgumentNullException.ThrowIfNull(errors);
        return new(kind, default, message ?? errors.First ?? "The request is not valid.", errors.ToDictionary());
    }
}
