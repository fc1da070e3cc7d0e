using System.Globalization;
using System.Text.RegularExpressions;

namespace Runfold.Shared.Studies;

/// <summary>
/// A validated factor with its coding. Coded units run from −1 at <see cref="Low"/> to +1 at <see cref="High"/>
/// (linear in log10 of the value for a log-scale factor). A categorical factor's natural value is its level
/// index 0…L−1, coded evenly over −1…+1.
/// </summary>
public sealed class Factor
{
    internal Factor(FactorSpec spec, int position)
    {
        Position = position;
        Name = spec.Name;
        Kind = spec.Kind;
        Scale = spec.Kind == FactorKind.Continuous ? spec.Scale : FactorScale.Linear;
        Unit = string.IsNullOrWhiteSpace(spec.Unit) ? null : spec.Unit.Trim();
        if (Kind == FactorKind.Categorical)
        {
            Levels = [.. spec.Levels!];
            Low = 0;
            High = Levels.Count - 1;
        }
        else
        {
            Levels = [];
            Low = spec.Low!.Value;
            High = spec.High!.Value;
        }
    }

    public int Position { get; }

    public string Name { get; }

    public FactorKind Kind { get; }

    public FactorScale Scale { get; }

    public string? Unit { get; }

    /// <summary>Lower end of the range in natural units (0 for a categorical factor).</summary>
    public double Low { get; }

    /// <summary>Upper end of the range in natural units (L−1 for a categorical factor).</summary>
    public double High { get; }

    public IReadOnlyList<string> Levels { get; }

    public bool IsCategorical => Kind == FactorKind.Categorical;

    /// <summary>Natural value → coded value. Values outside the range map outside −1…+1.</summary>
    public double ToCoded(double natural) => Scale == FactorScale.Log
        ? 2 * (Math.Log10(natural) - Math.Log10(Low)) / (Math.Log10(High) - Math.Log10(Low)) - 1
        : 2 * (natural - Low) / (High - Low) - 1;

    /// <summary>Coded value → natural value; integer factors round to the nearest whole number and categorical
    /// factors to the nearest level index (clamped to the levels that exist).</summary>
    public double FromCoded(double coded)
    {
        var natural = Scale == FactorScale.Log
            ? Math.Pow(10, Math.Log10(Low) + (coded + 1) / 2 * (Math.Log10(High) - Math.Log10(Low)))
            : Low + (coded + 1) / 2 * (High - Low);
        return Kind switch
        {
            FactorKind.Integer => Math.Round(natural, MidpointRounding.AwayFromZero),
            FactorKind.Categorical => Math.Clamp(Math.Round(natural, MidpointRounding.AwayFromZero), 0, Levels.Count - 1),
            _ => natural,
        };
    }

    /// <summary>The API's view of a natural value: the level name for a categorical factor, else the number.</summary>
    public FactorValue ToValue(double natural) =>
        IsCategorical ? FactorValue.OfLevel(Levels[(int)natural]) : FactorValue.Of(natural);

    /// <summary>The API's value → natural value, or an error sentence.</summary>
    public bool TryFromValue(FactorValue value, out double natural, out string? error)
    {
        natural = double.NaN;
        error = null;
        if (IsCategorical)
        {
            var index = value.Level is null ? -1 : IndexOfLevel(value.Level);
            if (index < 0)
            {
                error = $"'{value}' is not a level of {Name}; the levels are {string.Join(", ", Levels)}.";
                return false;
            }
            natural = index;
            return true;
        }
        if (value.IsLevel || !double.IsFinite(value.Number))
        {
            error = $"{Name} needs a finite number.";
            return false;
        }
        natural = value.Number;
        return true;
    }

    private int IndexOfLevel(string level)
    {
        for (var i = 0; i < Levels.Count; i++)
            if (string.Equals(Levels[i], level, StringComparison.OrdinalIgnoreCase)) return i;
        return -1;
    }

    public FactorSpec ToSpec() => new(
        Name, Kind,
        IsCategorical ? null : Low,
        IsCategorical ? null : High,
        IsCategorical ? Levels : null,
        Scale, Unit);

    public override string ToString() => IsCategorical
        ? $"{Name} {{{string.Join(", ", Levels)}}}"
        : string.Create(CultureInfo.InvariantCulture, $"{Name} [{Low} … {High}]{(Unit is null ? "" : " " + Unit)}");
}

/// <summary>The validated factors of a study, in order. The only way to build one is <see cref="Create"/>.</summary>
public sealed partial class FactorSpace
{
    public const int MaxFactors = 50;

    private FactorSpace(IReadOnlyList<Factor> factors) => Factors = factors;

    public IReadOnlyList<Factor> Factors { get; }

    public int Count => Factors.Count;

    public Factor this[int index] => Factors[index];

    public int IndexOf(string name)
    {
        for (var i = 0; i < Factors.Count; i++)
            if (string.Equals(Factors[i].Name, name, StringComparison.OrdinalIgnoreCase)) return i;
        return -1;
    }

    /// <summary>A coded row → natural row.</summary>
    public double[] FromCoded(ReadOnlySpan<double> coded)
    {
        var natural = new double[Count];
        for (var j = 0; j < Count; j++) natural[j] = Factors[j].FromCoded(coded[j]);
        return natural;
    }

    /// <summary>A natural row → coded row.</summary>
    public double[] ToCoded(ReadOnlySpan<double> natural)
    {
        var coded = new double[Count];
        for (var j = 0; j < Count; j++) coded[j] = Factors[j].ToCoded(natural[j]);
        return coded;
    }

    /// <summary>A natural row as the API shows it (name → number or level).</summary>
    public Dictionary<string, FactorValue> ToValues(ReadOnlySpan<double> natural)
    {
        var values = new Dictionary<string, FactorValue>(Count, StringComparer.Ordinal);
        for (var j = 0; j < Count; j++) values[Factors[j].Name] = Factors[j].ToValue(natural[j]);
        return values;
    }

    public IReadOnlyList<FactorSpec> ToSpecs() => [.. Factors.Select(f => f.ToSpec())];

    /// <summary>Checks every factor and names each problem by its field (<c>factors[i].low</c>).</summary>
    public static Validated<FactorSpace> Create(IReadOnlyList<FactorSpec>? specs, string field = "factors")
    {
        var errors = new ValidationErrors();
        if (specs is null || specs.Count == 0)
        {
            errors.Add(field, "A study needs at least one factor.");
            return Validated<FactorSpace>.Fail(errors);
        }
        if (specs.Count > MaxFactors)
            errors.Add(field, $"A study can have at most {MaxFactors} factors; this one has {specs.Count}.");

        var seen = new HashSet<string>(StringComparer.OrdinalIgnoreCase);
        for (var i = 0; i < specs.Count; i++)
        {
            var spec = specs[i];
            var at = $"{field}[{i}]";
            if (spec is null)
            {
                errors.Add(at, "This factor is empty.");
                continue;
            }
            CheckName(spec.Name, $"{at}.name", "factor", errors);
            if (!string.IsNullOrWhiteSpace(spec.Name) && !seen.Add(spec.Name))
                errors.Add($"{at}.name", $"Two factors are named '{spec.Name}'; factor names must be unique.");
            CheckFactor(spec, at, errors);
        }
        if (!errors.IsEmpty) return Validated<FactorSpace>.Fail(errors);
        return Validated<FactorSpace>.Ok(new FactorSpace([.. specs.Select((s, i) => new Factor(s, i))]));
    }

    private static void CheckFactor(FactorSpec spec, string at, ValidationErrors errors)
    {
        if (!Enum.IsDefined(spec.Kind)) errors.Add($"{at}.kind", "The kind must be continuous, integer or categorical.");
        if (!Enum.IsDefined(spec.Scale)) errors.Add($"{at}.scale", "The scale must be linear or log.");
        if (spec.Kind == FactorKind.Categorical)
        {
            var levels = spec.Levels;
            if (levels is null || levels.Count < 2)
            {
                errors.Add($"{at}.levels", $"The categorical factor '{spec.Name}' needs at least two levels.");
                return;
            }
            if (levels.Any(string.IsNullOrWhiteSpace))
                errors.Add($"{at}.levels", "A level name cannot be empty.");
            else if (levels.Distinct(StringComparer.OrdinalIgnoreCase).Count() != levels.Count)
                errors.Add($"{at}.levels", $"The levels of '{spec.Name}' must be distinct.");
            if (spec.Scale == FactorScale.Log)
                errors.Add($"{at}.scale", "A categorical factor has no log scale.");
            return;
        }

        var ok = true;
        if (spec.Low is not { } low) { errors.Add($"{at}.low", $"'{spec.Name}' needs a low value."); ok = false; low = 0; }
        else if (!double.IsFinite(low)) { errors.Add($"{at}.low", "The low value must be a finite number."); ok = false; }
        if (spec.High is not { } high) { errors.Add($"{at}.high", $"'{spec.Name}' needs a high value."); ok = false; high = 0; }
        else if (!double.IsFinite(high)) { errors.Add($"{at}.high", "The high value must be a finite number."); ok = false; }
        if (!ok) return;

        if (low >= high)
            errors.Add($"{at}.high", string.Create(CultureInfo.InvariantCulture,
                $"The high value of '{spec.Name}' ({high}) must be greater than its low value ({low})."));
        if (spec.Kind == FactorKind.Integer && (low != Math.Floor(low) || high != Math.Floor(high)))
            errors.Add($"{at}.low", $"The integer factor '{spec.Name}' needs whole-number low and high values.");
        if (spec.Scale == FactorScale.Log && spec.Kind == FactorKind.Continuous && low <= 0)
            errors.Add($"{at}.low", $"A log-scale factor needs a positive low value; '{spec.Name}' starts at {low.ToString(CultureInfo.InvariantCulture)}.");
        if (spec.Scale == FactorScale.Log && spec.Kind != FactorKind.Continuous)
            errors.Add($"{at}.scale", "Only continuous factors can have a log scale.");
        if (spec.Levels is { Count: > 0 })
            errors.Add($"{at}.levels", "Only a categorical factor has levels; give low and high instead.");
    }

    /// <summary>Names appear in constraint expressions, file headers and the API, so they are identifiers.</summary>
    internal static void CheckName(string? name, string field, string what, ValidationErrors errors)
    {
        if (string.IsNullOrWhiteSpace(name))
            errors.Add(field, $"Every {what} needs a name.");
        else if (name.Length > 64)
            errors.Add(field, $"The {what} name '{name[..20]}…' is longer than 64 characters.");
        else if (!IdentifierPattern().IsMatch(name))
            errors.Add(field, $"The {what} name '{name}' may use letters, digits and underscores only, starting with a letter (for example fin_height).");
    }

    [GeneratedRegex("^[A-Za-z][A-Za-z0-9_]*$")]
    private static partial Regex IdentifierPattern();
}
