using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling.Polynomial;

/// <summary>The response-surface families of Box & Draper (Response Surfaces, Mixtures and Ridge Analyses, 2007).</summary>
public enum PolynomialFamily
{
    /// <summary>Intercept and main effects.</summary>
    Linear,

    /// <summary>Main effects and all two-factor interactions.</summary>
    Interaction,

    /// <summary>Main effects and squares, no interactions.</summary>
    PureQuadratic,

    /// <summary>Main effects, two-factor interactions and squares (the second-order model).</summary>
    Quadratic,
}

/// <summary>How terms are chosen within a family.</summary>
public enum TermSelection
{
    /// <summary>Every term of the family.</summary>
    None,

    /// <summary>Bidirectional stepwise search from the full family by the corrected Akaike criterion
    /// (AICc, Hurvich & Tsai 1989), keeping the model hierarchical.</summary>
    StepwiseAicc,

    /// <summary>The same search by the prediction error sum of squares (PRESS, Allen 1974).</summary>
    StepwisePress,
}

/// <summary>One term: a product of encoded columns (none for the intercept, one for a main effect or an
/// indicator, the same column twice for a square, two columns for an interaction).</summary>
public sealed record PolynomialTerm(string Name, IReadOnlyList<int> Columns)
{
    public bool IsIntercept => Columns.Count == 0;

    public int Order => Columns.Count;

    /// <summary>The main-effect terms this term contains (hierarchy).</summary>
    internal IEnumerable<int> Parents => Columns.Distinct();

    internal double Evaluate(ReadOnlySpan<double> row)
    {
        var value = 1.0;
        foreach (var c in Columns) value *= row[c];
        return value;
    }
}

internal static class PolynomialTerms
{
    /// <summary>The terms of a family in standard order: intercept, main effects, interactions, squares.</summary>
    public static List<PolynomialTerm> Of(FactorEncoding encoding, PolynomialFamily family)
    {
        var m = encoding.ColumnCount;
        var terms = new List<PolynomialTerm> { new("intercept", []) };
        for (var c = 0; c < m; c++) terms.Add(new(encoding.ColumnNames[c], [c]));
        if (family is PolynomialFamily.Interaction or PolynomialFamily.Quadratic)
            for (var a = 0; a < m; a++)
                for (var b = a + 1; b < m; b++)
                    if (encoding.FactorOfColumn[a] != encoding.FactorOfColumn[b])
                        terms.Add(new($"{encoding.ColumnNames[a]}·{encoding.ColumnNames[b]}", [a, b]));
        if (family is PolynomialFamily.PureQuadratic or PolynomialFamily.Quadratic)
            for (var c = 0; c < m; c++)
                if (!encoding.IsIndicator(c)) terms.Add(new($"{encoding.ColumnNames[c]}²", [c, c]));
        return terms;
    }

    /// <summary>Number of terms of a family for a factor space.</summary>
    public static int Count(FactorSpace space, PolynomialFamily family) => Of(new FactorEncoding(space, dropFirstLevel: true), family).Count;

    public static string KindOf(PolynomialFamily family) => family switch
    {
        PolynomialFamily.Linear => "linear",
        PolynomialFamily.Interaction => "interaction",
        PolynomialFamily.PureQuadratic => "pureQuadratic",
        _ => "quadratic",
    };

    public static string NameOf(PolynomialFamily family) => family switch
    {
        PolynomialFamily.Linear => "linear",
        PolynomialFamily.Interaction => "linear with two-factor interactions",
        PolynomialFamily.PureQuadratic => "pure quadratic",
        _ => "full quadratic",
    };
}
