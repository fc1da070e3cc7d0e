using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>
/// A design: one row per run, one column per factor, in coded units (−1…+1 spans each factor's range; a
/// circumscribed central composite design reaches beyond it). Natural values follow from the factor space.
/// </summary>
public sealed class DesignMatrix
{
    public DesignMatrix(FactorSpace space, Matrix<double> coded)
    {
        ArgumentNullException.ThrowIfNull(space);
        ArgumentNullException.ThrowIfNull(coded);
        if (coded.ColumnCount != space.Count)
            throw new ArgumentException($"The design has {coded.ColumnCount} columns for {space.Count} factors.", nameof(coded));
        Space = space;
        Coded = coded;
    }

    public FactorSpace Space { get; }

    public Matrix<double> Coded { get; }

    public int RunCount => Coded.RowCount;

    /// <summary>Run i in natural units (categorical factors as level index; integers rounded).</summary>
    public double[] NaturalRow(int i) => Space.FromCoded(Coded.Row(i).AsArray() ?? Coded.Row(i).ToArray());

    public IEnumerable<double[]> NaturalRows()
    {
        for (var i = 0; i < RunCount; i++) yield return NaturalRow(i);
    }
}

/// <summary>How large a design may be before it is refused (DESIGN.md: a configurable maximum).</summary>
public sealed record DesignLimits(int MaxRuns = 10_000)
{
    public static DesignLimits Default { get; } = new();
}

/// <summary>A generated design and what the lead should know about it: notes (what was built), warnings (what
/// to look at before running it), the runs that break constraints, and the fraction or composite layout.</summary>
public sealed record GeneratedDesign(DesignMatrix Matrix, DesignMethod Method, IReadOnlyList<string> Notes)
{
    public IReadOnlyList<string> Warnings { get; init; } = [];

    /// <summary>The model the design is judged by (the request's, or the method's usual one).</summary>
    public DesignModelKind Model { get; init; } = DesignModelKind.Linear;

    public IReadOnlyList<ConstraintViolation> ConstraintViolations { get; init; } = [];

    public FractionSummary? Fraction { get; init; }

    public CompositeSummary? Composite { get; init; }

    /// <summary>True when every run lies within the factor ranges (coded −1…+1).</summary>
    public bool StaysInsideRanges => Matrix.Coded.Enumerate().All(v => Math.Abs(v) <= 1 + 1e-9);
}
