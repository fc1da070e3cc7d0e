using System.Text.Json;
using System.Text.Json.Serialization;

namespace Runfold.Shared.Studies;

// The words of DESIGN.md §4 as types. JSON names are camelCase strings ("continuous", "minimize", ...).

/// <summary>Enum ⇄ camelCase JSON string, fixed on the type so every serializer agrees; numbers are refused.</summary>
public sealed class CamelCaseEnumConverter<TEnum>() : JsonStringEnumConverter<TEnum>(JsonNamingPolicy.CamelCase, allowIntegerValues: false)
    where TEnum : struct, Enum;

[JsonConverter(typeof(CamelCaseEnumConverter<FactorKind>))]
public enum FactorKind { Continuous, Integer, Categorical }

[JsonConverter(typeof(CamelCaseEnumConverter<FactorScale>))]
public enum FactorScale { Linear, Log }

/// <summary>What the team wants from a response. <c>Range</c> means "keep it between lower and upper".</summary>
[JsonConverter(typeof(CamelCaseEnumConverter<ResponseGoal>))]
public enum ResponseGoal { Minimize, Maximize, Target, Range, None }

/// <summary>Life of a run: open → claimed → done | failed; a lapsed lease or a release returns it to open.</summary>
[JsonConverter(typeof(CamelCaseEnumConverter<RunState>))]
public enum RunState { Open, Claimed, Done, Failed }

[JsonConverter(typeof(CamelCaseEnumConverter<StudyRole>))]
public enum StudyRole { Viewer, Analyst, Lead }

/// <summary>Why a group of runs was added: the first design, infill where the model is unsure or promising,
/// augmentation of the space-filling, or verification of candidates.</summary>
[JsonConverter(typeof(CamelCaseEnumConverter<WaveKind>))]
public enum WaveKind { Initial, Infill, Augment, Verification }

[JsonConverter(typeof(CamelCaseEnumConverter<DesignMethod>))]
public enum DesignMethod
{
    FullFactorial,
    FractionalFactorial,
    CentralComposite,
    BoxBehnken,
    LatinHypercube,
    Sobol,
    DOptimal,
}

[JsonConverter(typeof(CamelCaseEnumConverter<CentralCompositeVariant>))]
public enum CentralCompositeVariant { Circumscribed, Inscribed, FaceCentered }
