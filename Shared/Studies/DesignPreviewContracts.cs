using System.Text.Json.Serialization;

namespace Runfold.Shared.Studies;

// Request and answer of POST /api/designs/preview (DESIGN.md §5): the runs a design would give and how good
// they are, with nothing stored. Study creation uses the same generators.

/// <summary>The regression model a design is judged by (and a D-optimal design is built for): main effects,
/// main effects plus two-factor interactions, or the full second-order (quadratic) model.</summary>
[JsonConverter(typeof(CamelCaseEnumConverter<DesignModelKind>))]
public enum DesignModelKind { Linear, Interactions, Quadratic }

public sealed record DesignPreviewRequest(IReadOnlyList<FactorSpec> Factors, DesignSpec Design);

/// <summary>One run of a preview, in natural units (level names for categorical factors).</summary>
public sealed record PreviewRun(IReadOnlyDictionary<string, FactorValue> Factors);

/// <summary>Design-quality figures. Distances are in coded units (−1…+1 per factor). The centered L2
/// discrepancy is Hickernell's (1998) squared form, as scipy.stats.qmc.discrepancy(method="CD") reports it, on
/// the design scaled into the unit cube. D-efficiency is |X'X / N|^(1/p) for the model's p terms in coded
/// units (1 for an orthogonal two-level design and a linear model); the condition number is that of X'X.
/// Both are absent when the model cannot be estimated from the runs.</summary>
public sealed record DesignMetricsSummary(
    int Runs,
    IReadOnlyDictionary<string, int> Levels,
    double MinDistance,
    double CenteredL2Discrepancy,
    double MaxAbsCorrelation,
    DesignModelKind Model,
    int ModelTerms,
    double? DEfficiency = null,
    double? ConditionNumber = null);

/// <summary>What a two-level fractional factorial confounds: generators, resolution, and the aliases of each
/// main effect and two-factor interaction among main effects and two-factor interactions.</summary>
public sealed record FractionSummary(
    int Factors,
    int Fraction,
    int Runs,
    int? Resolution,
    IReadOnlyList<string> Generators,
    IReadOnlyList<string> DefiningRelation,
    IReadOnlyList<AliasChain> Aliases,
    string Source);

/// <summary>An effect and the effects it cannot be told apart from in this fraction (empty: clear).</summary>
public sealed record AliasChain(string Effect, IReadOnlyList<string> AliasedWith);

/// <summary>How a central composite design is laid out: the variant, α in coded units, the factorial core and
/// whether every run stays inside the factor ranges.</summary>
public sealed record CompositeSummary(
    CentralCompositeVariant Variant,
    double Alpha,
    bool Rotatable,
    int FactorialRuns,
    int AxialRuns,
    int CenterRuns,
    bool StaysInsideRanges,
    string Note);

/// <summary>A run (numbered from 1, as the study numbers them) that breaks one or more constraints.</summary>
public sealed record ConstraintViolation(int Run, IReadOnlyList<string> Constraints);

public sealed record DesignPreview(
    DesignMethod Method,
    IReadOnlyList<PreviewRun> Runs,
    DesignMetricsSummary Metrics,
    bool StaysInsideRanges,
    IReadOnlyList<string> Notes,
    IReadOnlyList<string> Warnings,
    IReadOnlyList<ConstraintViolation> ConstraintViolations,
    FractionSummary? Fraction = null,
    CompositeSummary? Composite = null);
