// Polynomial regression models for judging and building designs: main effects, two-factor interactions and
// pure quadratic terms in coded units; categorical factors enter by effects coding (Montgomery, ch. 10).
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>The columns of the model matrix X for a factor space: intercept, main effects (L − 1 effects-coded
/// columns for a categorical factor with L levels), then, as the kind asks, every product of two factors'
/// columns and the square of every numeric factor that can take three or more values.</summary>
public sealed class DesignModel
{
    private readonly FactorSpace _space;
    private readonly int[] _mainStart;   // first main-effect column of factor j (after the intercept)
    private readonly int[] _mainWidth;   // 1 for numeric, L − 1 for categorical
    private readonly List<(int A, int B)> _products = [];
    private readonly List<int> _squares = [];
    private readonly int _mainColumns;

    public DesignModel(FactorSpace space, DesignModelKind kind)
    {
        ArgumentNullException.ThrowIfNull(space);
        _space = space;
        Kind = kind;
        var names = new List<string> { "intercept" };
        _mainStart = new int[space.Count];
        _mainWidth = new int[space.Count];
        var column = 1;
        for (var j = 0; j < space.Count; j++)
        {
            var f = space[j];
            _mainStart[j] = column;
            _mainWidth[j] = f.IsCategorical ? f.Levels.Count - 1 : 1;
            if (f.IsCategorical)
                for (var l = 0; l < f.Levels.Count - 1; l++) names.Add($"{f.Name}[{f.Levels[l]}]");
            else names.Add(f.Name);
            column += _mainWidth[j];
        }
        _mainColumns = column;
        if (kind != DesignModelKind.Linear)
        {
            for (var a = 0; a < space.Count; a++)
                for (var b = a + 1; b < space.Count; b++)
                    for (var ca = 0; ca < _mainWidth[a]; ca++)
                        for (var cb = 0; cb < _mainWidth[b]; cb++)
                        {
                            _products.Add((_mainStart[a] + ca, _mainStart[b] + cb));
                            names.Add($"{names[_mainStart[a] + ca]}*{names[_mainStart[b] + cb]}");
                        }
        }
        if (kind == DesignModelKind.Quadratic)
        {
            for (var j = 0; j < space.Count; j++)
            {
                var f = space[j];
                var threeOrMore = f.Kind == FactorKind.Continuous || (f.Kind == FactorKind.Integer && f.High - f.Low >= 2);
                if (!threeOrMore) continue;
                _squares.Add(_mainStart[j]);
                names.Add($"{f.Name}^2");
            }
        }
        TermNames = names;
    }

    public DesignModelKind Kind { get; }

    public IReadOnlyList<string> TermNames { get; }

    public int TermCount => TermNames.Count;

    /// <summary>Fills <paramref name="terms"/> (length <see cref="TermCount"/>) with the model row of one coded run.</summary>
    public void Row(ReadOnlySpan<double> coded, Span<double> terms)
    {
        terms[0] = 1;
        for (var j = 0; j < _space.Count; j++)
        {
            var f = _space[j];
            var start = _mainStart[j];
            if (!f.IsCategorical)
            {
                terms[start] = coded[j];
                continue;
            }
            var levels = f.Levels.Count;
            var index = (int)Math.Clamp(Math.Round((coded[j] + 1) / 2 * (levels - 1)), 0, levels - 1);
            for (var l = 0; l < levels - 1; l++)
                terms[start + l] = index == levels - 1 ? -1 : index == l ? 1 : 0;
        }
        var t = _mainColumns;
        foreach (var (a, b) in _products) terms[t++] = terms[a] * terms[b];
        foreach (var s in _squares) terms[t++] = terms[s] * terms[s];
    }

    /// <summary>X for a coded design (one row per run).</summary>
    public Matrix<double> ModelMatrix(Matrix<double> coded)
    {
        ArgumentNullException.ThrowIfNull(coded);
        var x = Matrix<double>.Build.Dense(coded.RowCount, TermCount);
        var row = new double[coded.ColumnCount];
        var terms = new double[TermCount];
        for (var i = 0; i < coded.RowCount; i++)
        {
            for (var j = 0; j < row.Length; j++) row[j] = coded[i, j];
            Row(row, terms);
            for (var t = 0; t < terms.Length; t++) x[i, t] = terms[t];
        }
        return x;
    }

    /// <summary>"linear", "interactions" or "quadratic" (any case); null or blank gives <paramref name="fallback"/>.</summary>
    public static bool TryParseKind(string? text, DesignModelKind fallback, out DesignModelKind kind)
    {
        kind = fallback;
        if (string.IsNullOrWhiteSpace(text)) return true;
        return Enum.TryParse(text.Trim(), ignoreCase: true, out kind) && Enum.IsDefined(kind);
    }
}
