namespace Runfold.Shared.Studies;

/// <summary>
/// Field → messages, as the API returns them in a validation problem (field paths like <c>factors[1].low</c>).
/// Every message is a sentence a person can act on.
/// </summary>
public sealed class ValidationErrors
{
    private readonly Dictionary<string, List<string>> _errors = new(StringComparer.Ordinal);

    public bool IsEmpty => _errors.Count == 0;

    /// <summary>Errors with one message for one field.</summary>
    public static ValidationErrors Single(string field, string message)
    {
        var errors = new ValidationErrors();
        errors.Add(field, message);
        return errors;
    }

    public void Add(string field, string message)
    {
        if (!_errors.TryGetValue(field, out var list)) _errors[field] = list = [];
        list.Add(message);
    }

    public void AddRange(ValidationErrors other)
    {
        foreach (var (field, messages) in other._errors)
            foreach (var message in messages) Add(field, message);
    }

    public IReadOnlyDictionary<string, string[]> ToDictionary() =>
        _errors.ToDictionary(e => e.Key, e => e.Value.ToArray(), StringComparer.Ordinal);

    /// <summary>The first message, for a one-line summary.</summary>
    public string? First => _errors.Values.SelectMany(v => v).FirstOrDefault();

    public override string ToString() => string.Join(" ", _errors.Select(e => $"{e.Key}: {string.Join(" ", e.Value)}"));
}

/// <summary>Either a value or the validation errors that prevented it.</summary>
public sealed class Validated<T>
{
    private Validated(T? value, ValidationErrors? errors) => (Value, Errors) = (value, errors ?? new ValidationErrors());

    public T? Value { get; }

    public ValidationErrors Errors { get; }

    public bool IsValid => Errors.IsEmpty;

    public static Validated<T> Ok(T value) => new(value, null);

    public static Validated<T> Fail(ValidationErrors errors) => new(default, errors);

    public static Validated<T> Fail(string field, string message)
    {
        var errors = new ValidationErrors();
        errors.Add(field, message);
        return new(default, errors);
    }
}
