using System.Globalization;
using Runfold.Shared.Studies;

namespace Runfold.Client.Setup;

/// <summary>The set-up page's form as the person types it: numbers stay text until they are read, so a half-typed
/// value is named next to its field instead of being lost. Field keys follow the API's (<c>factors[1].low</c>).</summary>
public sealed class StudyDraft
{
    public string Name { get; set; } = "";

    public string Description { get; set; } = "";

    public List<FactorDraft> Factors { get; } = [];

    public List<ResponseDraft> Responses { get; } = [];

    public DesignDraft Design { get; } = new();

    /// <summary>A start that is not a blank wall: the plate-fin heat sink of the demo (five factors, three responses,
    /// a 40-run maximin Latin hypercube).</summary>
    public static StudyDraft HeatSinkStart()
    {
        var draft = new StudyDraft();
        draft.Factors.AddRange(
        [
            new FactorDraft { Name = "fin_height", Unit = "mm", Low = "20", High = "60" },
            new FactorDraft { Name = "fin_thickness", Unit = "mm", Low = "0.8", High = "2.5" },
            new FactorDraft { Name = "fin_count", Kind = FactorKind.Integer, Low = "10", High = "40" },
            new FactorDraft { Name = "base_thickness", Unit = "mm", Low = "3", High = "10" },
            new FactorDraft { Name = "air_velocity", Unit = "m/s", Low = "1", High = "6" },
        ]);
        draft.Responses.AddRange(
        [
            new ResponseDraft { Name = "thermal_resistance", Goal = ResponseGoal.Minimize, Unit = "K/W" },
            new ResponseDraft { Name = "pressure_drop", Goal = ResponseGoal.Minimize, Upper = "60", Weight = "0.5", Unit = "Pa" },
            new ResponseDraft { Name = "mass", Goal = ResponseGoal.Minimize, Weight = "0.5", Unit = "g" },
        ]);
        draft.Design.Method = DesignMethod.LatinHypercube;
        draft.Design.Runs = "40";
        return draft;
    }

    /// <summary>What the preview needs: the factors and the design, plus the fields that could not be read.</summary>
    public (DesignPreviewRequest Request, ValidationErrors Errors) ToPreview()
    {
        var errors = new ValidationErrors();
        var factors = Factors.Select((f, i) => f.ToSpec($"factors[{i}]", errors)).ToList();
        return (new DesignPreviewRequest(factors, Design.ToSpec(errors)), errors);
    }

    /// <summary>The whole creation request, plus the fields that could not be read.</summary>
    public (CreateStudyRequest Request, ValidationErrors Errors) ToRequest()
    {
        var (preview, errors) = ToPreview();
        var responses = Responses.Select((r, i) => r.ToSpec($"responses[{i}]", errors)).ToList();
        var request = new CreateStudyRequest(Name.Trim(), preview.Factors, responses, preview.Design,
            string.IsNullOrWhiteSpace(Description) ? null : Description.Trim());
        return (request, errors);
    }

    /// <summary>Reads a number typed by a person (decimal point, an exponent allowed); blank is null.</summary>
    internal static double? ReadNumber(string? text, string field, ValidationErrors errors)
    {
        if (string.IsNullOrWhiteSpace(text)) return null;
        if (double.TryParse(text.Trim(), NumberStyles.Float, CultureInfo.InvariantCulture, out var value) && double.IsFinite(value)) return value;
        errors.Add(field, text.Contains(',', StringComparison.Ordinal)
            ? $"'{text.Trim()}' is not a number; write decimals with a point, like 0.8."
            : $"'{text.Trim()}' is not a number.");
        return null;
    }

    internal static int? ReadWhole(string? text, string field, ValidationErrors errors)
    {
        if (string.IsNullOrWhiteSpace(text)) return null;
        if (int.TryParse(text.Trim(), NumberStyles.Integer, CultureInfo.InvariantCulture, out var value)) return value;
        errors.Add(field, $"'{text.Trim()}' is not a whole number.");
        return null;
    }

    internal static string? Text(string? text) => string.IsNullOrWhiteSpace(text) ? null : text.Trim();
}

public sealed class FactorDraft
{
    public string Name { get; set; } = "";

    public FactorKind Kind { get; set; } = FactorKind.Continuous;

    public string Unit { get; set; } = "";

    public string Low { get; set; } = "";

    public string High { get; set; } = "";

    /// <summary>A categorical factor's levels, separated by commas.</summary>
    public string Levels { get; set; } = "";

    public FactorScale Scale { get; set; } = FactorScale.Linear;

    internal FactorSpec ToSpec(string field, ValidationErrors errors)
    {
        if (Kind == FactorKind.Categorical)
        {
            var levels = Levels.Split(',', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries);
            return new FactorSpec(Name.Trim(), Kind, Levels: levels, Unit: StudyDraft.Text(Unit));
        }
        return new FactorSpec(Name.Trim(), Kind,
            StudyDraft.ReadNumber(Low, field + ".low", errors),
            StudyDraft.ReadNumber(High, field + ".high", errors),
            Scale: Kind == FactorKind.Continuous ? Scale : FactorScale.Linear,
            Unit: StudyDraft.Text(Unit));
    }
}

public sealed class ResponseDraft
{
    public string Name { get; set; } = "";

    public ResponseGoal Goal { get; set; } = ResponseGoal.Minimize;

    public string Target { get; set; } = "";

    public string Lower { get; set; } = "";

    public string Upper { get; set; } = "";

    public string Weight { get; set; } = "1";

    public string Unit { get; set; } = "";

    public bool Noisy { get; set; }

    internal ResponseSpec ToSpec(string field, ValidationErrors errors) => new(
        Name.Trim(),
        Goal,
        Goal == ResponseGoal.Target ? StudyDraft.ReadNumber(Target, field + ".target", errors) : null,
        StudyDraft.ReadNumber(Lower, field + ".lower", errors),
        StudyDraft.ReadNumber(Upper, field + ".upper", errors),
        StudyDraft.ReadNumber(Weight, field + ".weight", errors),
        StudyDraft.Text(Unit),
        Noisy);
}

/// <summary>The design method and the knobs it reads; the others are not sent.</summary>
public sealed class DesignDraft
{
    public DesignMethod Method { get; set; } = DesignMethod.LatinHypercube;

    public string Runs { get; set; } = "";

    /// <summary>One level count for every numeric factor, or one per factor, separated by commas.</summary>
    public string Levels { get; set; } = "";

    public string CenterPoints { get; set; } = "";

    public CentralCompositeVariant Variant { get; set; } = CentralCompositeVariant.Circumscribed;

    public string Resolution { get; set; } = "";

    public bool Scramble { get; set; }

    public bool Maximin { get; set; } = true;

    public string Seed { get; set; } = "1";

    public DesignModelKind Model { get; set; } = DesignModelKind.Quadratic;

    /// <summary>One inequality per line, e.g. <c>fin_count * fin_thickness &lt;= 60</c>.</summary>
    public string Constraints { get; set; } = "";

    public bool Reads(DesignKnob knob) => knob switch
    {
        DesignKnob.Runs => Method is DesignMethod.LatinHypercube or DesignMethod.Sobol or DesignMethod.DOptimal,
        DesignKnob.Levels => Method == DesignMethod.FullFactorial,
        DesignKnob.CenterPoints => Method is DesignMethod.FullFactorial or DesignMethod.FractionalFactorial or DesignMethod.CentralComposite or DesignMethod.BoxBehnken,
        DesignKnob.Variant => Method == DesignMethod.CentralComposite,
        DesignKnob.Resolution => Method == DesignMethod.FractionalFactorial,
        DesignKnob.Scramble => Method == DesignMethod.Sobol,
        DesignKnob.Maximin => Method == DesignMethod.LatinHypercube,
        DesignKnob.Seed => Method is DesignMethod.LatinHypercube or DesignMethod.Sobol or DesignMethod.DOptimal,
        DesignKnob.Model => Method == DesignMethod.DOptimal,
        _ => false,
    };

    internal DesignSpec ToSpec(ValidationErrors errors)
    {
        IReadOnlyList<int>? levels = null;
        if (Reads(DesignKnob.Levels) && !string.IsNullOrWhiteSpace(Levels))
        {
            var parts = Levels.Split(',', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries);
            var read = parts.Select(p => StudyDraft.ReadWhole(p, "design.levels", errors)).ToList();
            if (read.All(l => l is not null)) levels = [.. read.Select(l => l!.Value)];
        }
        var constraints = Constraints.Split('\n', StringSplitOptions.RemoveEmptyEntries | StringSplitOptions.TrimEntries);
        return new DesignSpec(
            Method,
            Runs: Reads(DesignKnob.Runs) ? StudyDraft.ReadWhole(Runs, "design.runs", errors) : null,
            Levels: levels,
            CenterPoints: Reads(DesignKnob.CenterPoints) ? StudyDraft.ReadWhole(CenterPoints, "design.centerPoints", errors) : null,
            Variant: Reads(DesignKnob.Variant) ? Variant : null,
            Resolution: Reads(DesignKnob.Resolution) ? StudyDraft.ReadWhole(Resolution, "design.resolution", errors) : null,
            Scramble: Reads(DesignKnob.Scramble) ? Scramble : null,
            Seed: Reads(DesignKnob.Seed) ? StudyDraft.ReadWhole(Seed, "design.seed", errors) : null,
            Constraints: constraints.Length == 0 ? null : constraints,
            Model: Reads(DesignKnob.Model) ? Model.ToString().ToLowerInvariant() : null,
            Maximin: Reads(DesignKnob.Maximin) ? Maximin : null);
    }
}

public enum DesignKnob { Runs, Levels, CenterPoints, Variant, Resolution, Scramble, Maximin, Seed, Model }
