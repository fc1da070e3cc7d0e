// Polynomial response surfaces by least squares with ANOVA, lack of fit and PRESS (Montgomery, Design and Analysis of
// Experiments, 8th ed. 2013, ch. 10–11; Myers, Montgomery & Anderson-Cook, Response Surface Methodology, 2016).
using MathNet.Numerics.Distributions;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling.Polynomial;

/// <summary>How a polynomial response surface is fitted.</summary>
public sealed record PolynomialOptions
{
    public PolynomialFamily Family { get; init; } = PolynomialFamily.Quadratic;

    public TermSelection Selection { get; init; } = TermSelection.StepwiseAicc;

    /// <summary>When the runs are too few for the family's terms, try the next simpler family instead of refusing.</summary>
    public bool FallBackToSimplerFamily { get; init; } = true;

    public static PolynomialOptions Default { get; } = new();
}

/// <summary>A fitted polynomial, or the reasons there is none and how many runs a linear model still needs.</summary>
public sealed record PolynomialFitResult(PolynomialSurrogate? Model, IReadOnlyList<string> Refusals, int RunsStillNeeded)
{
    public bool IsFitted => Model is not null;
}

/// <summary>Fits polynomial response surfaces.</summary>
public static class PolynomialModel
{
    /// <summary>The families; after a refusal the ones with fewer terms are tried, largest first.</summary>
    private static readonly PolynomialFamily[] Simpler =
        [PolynomialFamily.Quadratic, PolynomialFamily.Interaction, PolynomialFamily.PureQuadratic, PolynomialFamily.Linear];

    /// <summary>Runs a family needs: one more than its terms, so one residual degree of freedom remains.</summary>
    public static int RunsNeeded(FactorSpace space, PolynomialFamily family) => PolynomialTerms.Count(space, family) + 1;

    public static PolynomialFitResult Fit(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed,
        PolynomialOptions? options = null, CancellationToken cancellation = default)
    {
        options ??= PolynomialOptions.Default;
        TrainingData.Check(space, coded, observed);
        var encoding = new FactorEncoding(space, dropFirstLevel: true);
        var x = encoding.Encode(coded);
        var n = coded.RowCount;
        var refusals = new List<string>();
        var requested = PolynomialTerms.Count(space, options.Family);
        IEnumerable<PolynomialFamily> families = options.FallBackToSimplerFamily
            ? Simpler.Where(f => f == options.Family || PolynomialTerms.Count(space, f) < requested)
                .OrderBy(f => f == options.Family ? 0 : 1).ThenByDescending(f => PolynomialTerms.Count(space, f))
            : [options.Family];
        foreach (var family in families)
        {
            cancellation.ThrowIfCancellationRequested();
            var terms = PolynomialTerms.Of(encoding, family);
            if (n < terms.Count + 1)
            {
                refusals.Add($"The {PolynomialTerms.NameOf(family)} model has {terms.Count} terms and needs at least {terms.Count + 1} runs; there are {n}.");
                continue;
            }
            var model = FitFamily(space, encoding, family, terms, x, observed, options.Selection, cancellation, out var dropped);
            if (model is null)
            {
                refusals.Add($"The terms of the {PolynomialTerms.NameOf(family)} model cannot be separated with these runs.");
                continue;
            }
            if (dropped.Count > 0)
                refusals.Add($"{string.Join(", ", dropped)} cannot be separated from other terms with these runs and were left out.");
            return new PolynomialFitResult(model, refusals, 0);
        }
        var needed = RunsNeeded(space, PolynomialFamily.Linear);
        return new PolynomialFitResult(null, refusals, Math.Max(needed - n, 0));
    }

    /// <summary>
    /// Fits exactly the named terms of a family by least squares, without selection: a chosen model refitted to a
    /// changed set of runs. <paramref name="selection"/> only labels how the terms were once chosen. Null when a
    /// name is not a term of the family, the runs are too few, or the terms cannot be separated with these runs.
    /// </summary>
    public static PolynomialSurrogate? FitTerms(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed,
        PolynomialFamily family, IReadOnlyList<string> termNames, TermSelection selection = TermSelection.None)
    {
        ArgumentNullException.ThrowIfNull(termNames);
        TrainingData.Check(space, coded, observed);
        var encoding = new FactorEncoding(space, dropFirstLevel: true);
        var terms = PolynomialTerms.Of(encoding, family);
        var chosen = new List<int>(termNames.Count);
        foreach (var name in termNames)
        {
            var index = terms.FindIndex(t => t.Name == name);
            if (index < 0 || chosen.Contains(index)) return null;
            chosen.Add(index);
        }
        chosen.Sort();
        var n = coded.RowCount;
        if (chosen.Count == 0 || n < chosen.Count + 1) return null;
        var x = encoding.Encode(coded);
        var fit = LeastSquares.Fit(Design(terms, chosen, x, n, encoding.ColumnCount), observed);
        return fit is null ? null : new PolynomialSurrogate(space, encoding, family, selection, [.. chosen.Select(t => terms[t])], fit, x, observed);
    }

    private static PolynomialSurrogate? FitFamily(FactorSpace space, FactorEncoding encoding, PolynomialFamily family,
        List<PolynomialTerm> terms, double[] x, IReadOnlyList<double> y, TermSelection selection, CancellationToken cancellation,
        out List<string> dropped)
    {
        var n = y.Count;
        var m = encoding.ColumnCount;
        dropped = [];
        // Start from every term that can be estimated, in standard order (aliased terms are left out).
        var chosen = new List<int>();
        for (var t = 0; t < terms.Count; t++)
        {
            chosen.Add(t);
            if (LeastSquares.Fit(Design(terms, chosen, x, n, m), y) is null)
            {
                chosen.RemoveAt(chosen.Count - 1);
                dropped.Add(terms[t].Name);
            }
        }
        if (chosen.Count == 0) return null;
        var sst = TotalSumOfSquares(y);

        if (selection != TermSelection.None)
        {
            var criterion = new SubsetCriterion(terms, x, y, n, m, selection, sst);
            var current = criterion.Evaluate(chosen);
            for (var step = 0; step < 4 * terms.Count; step++)
            {
                cancellation.ThrowIfCancellationRequested();
                List<int>? bestSet = null;
                var bestValue = current;
                foreach (var candidate in Moves(terms, chosen, n))
                {
                    var value = criterion.Evaluate(candidate);
                    if (value < bestValue - 1e-9 * Math.Max(1, Math.Abs(bestValue)))
                    {
                        bestValue = value;
                        bestSet = candidate;
                    }
                }
                if (bestSet is null) break;
                chosen = bestSet;
                current = bestValue;
            }
        }
        var selected = chosen.Select(t => terms[t]).ToList();
        var fit = LeastSquares.Fit(Design(terms, chosen, x, n, m), y)!;
        return new PolynomialSurrogate(space, encoding, family, selection, selected, fit, x, y);
    }

    /// <summary>Removing one term whose higher-order relatives are absent, or adding one whose main effects are present.</summary>
    private static IEnumerable<List<int>> Moves(List<PolynomialTerm> terms, List<int> chosen, int n)
    {
        var inModel = new HashSet<int>(chosen);
        foreach (var t in chosen)
        {
            var term = terms[t];
            if (term.IsIntercept) continue;
            if (term.Order == 1 && chosen.Any(o => terms[o].Order == 2 && terms[o].Columns.Contains(term.Columns[0]))) continue;
            yield return [.. chosen.Where(c => c != t)];
        }
        if (chosen.Count + 2 > n) yield break;
        for (var t = 0; t < terms.Count; t++)
        {
            if (inModel.Contains(t)) continue;
            var term = terms[t];
            if (term.Order == 2 && !term.Parents.All(c => chosen.Any(o => terms[o].Order == 1 && terms[o].Columns[0] == c))) continue;
            var added = new List<int>(chosen) { t };
            added.Sort();
            yield return added;
        }
    }

    /// <summary>
    /// The selection criterion of any subset of a family's terms from the normal equations of the full term set
    /// (one Gram matrix, then a small Cholesky per subset), so a stepwise search costs little per move. The final
    /// model is fitted by QR.
    /// </summary>
    private sealed class SubsetCriterion
    {
        private readonly double[] _design; // n × T, all terms, response centred
        private readonly double[] _gram;   // T × T
        private readonly double[] _right;  // T
        private readonly double[] _y;
        private readonly int _n, _t;
        private readonly TermSelection _selection;
        private readonly double _sst;

        public SubsetCriterion(List<PolynomialTerm> terms, double[] x, IReadOnlyList<double> y, int n, int m, TermSelection selection, double sst)
        {
            _n = n;
            _t = terms.Count;
            _selection = selection;
            _sst = sst;
            var mean = y.Average();
            _y = [.. y.Select(v => v - mean)];
            _design = new double[n * _t];
            for (var i = 0; i < n; i++)
                for (var j = 0; j < _t; j++) _design[i * _t + j] = terms[j].Evaluate(x.AsSpan(i * m, m));
            _gram = new double[_t * _t];
            _right = new double[_t];
            for (var a = 0; a < _t; a++)
            {
                for (var b = 0; b <= a; b++)
                {
                    var sum = 0.0;
                    for (var i = 0; i < n; i++) sum += _design[i * _t + a] * _design[i * _t + b];
                    _gram[a * _t + b] = _gram[b * _t + a] = sum;
                }
                var r = 0.0;
                for (var i = 0; i < n; i++) r += _design[i * _t + a] * _y[i];
                _right[a] = r;
            }
        }

        public double Evaluate(List<int> chosen)
        {
            var p = chosen.Count;
            var g = new double[p * p];
            for (var a = 0; a < p; a++)
                for (var b = 0; b < p; b++) g[a * p + b] = _gram[chosen[a] * _t + chosen[b]];
            if (!LinearAlgebra.BlockedCholesky.TryFactor(g, p)) return double.PositiveInfinity;
            for (var a = 0; a < p; a++)
                if (!(g[a * p + a] * g[a * p + a] > 1e-10 * _gram[chosen[a] * _t + chosen[a]])) return double.PositiveInfinity;
            var beta = new double[p];
            for (var a = 0; a < p; a++) beta[a] = _right[chosen[a]];
            LinearAlgebra.BlockedCholesky.Solve(g, p, beta);
            var row = new double[p];
            var sse = 0.0;
            var press = 0.0;
            for (var i = 0; i < _n; i++)
            {
                var fitted = 0.0;
                for (var a = 0; a < p; a++)
                {
                    row[a] = _design[i * _t + chosen[a]];
                    fitted += row[a] * beta[a];
                }
                var e = _y[i] - fitted;
                sse += e * e;
                if (_selection != TermSelection.StepwisePress) continue;
                var quadratic = 0.0;
                var solved = (double[])row.Clone();
                LinearAlgebra.BlockedCholesky.Solve(g, p, solved);
                for (var a = 0; a < p; a++) quadratic += row[a] * solved[a];
                var denominator = 1 - quadratic;
                if (denominator < 1e-10) return double.PositiveInfinity;
                press += e / denominator * (e / denominator);
            }
            if (_selection == TermSelection.StepwisePress) return press;
            if (_n - p - 1 <= 0) return double.PositiveInfinity;
            // An exact fit would give log 0: the floor keeps near-exact models comparable by their term count.
            sse = Math.Max(sse, 1e-14 * Math.Max(_sst, double.Epsilon));
            return _n * Math.Log(sse / _n) + 2.0 * p + 2.0 * p * (p + 1) / (_n - p - 1);
        }
    }

    internal static Matrix<double> Design(List<PolynomialTerm> terms, List<int> chosen, double[] x, int n, int m)
    {
        var design = Matrix<double>.Build.Dense(n, chosen.Count);
        for (var i = 0; i < n; i++)
        {
            var row = x.AsSpan(i * m, m);
            for (var j = 0; j < chosen.Count; j++) design[i, j] = terms[chosen[j]].Evaluate(row);
        }
        return design;
    }

    internal static double TotalSumOfSquares(IReadOnlyList<double> y)
    {
        var mean = y.Average();
        return y.Sum(v => (v - mean) * (v - mean));
    }
}

/// <summary>One row of the coefficient table.</summary>
public sealed record CoefficientRow(string Term, double Estimate, double StandardError, double T, double P);

/// <summary>One row of the analysis of variance. F and P are null where no test applies.</summary>
public sealed record AnovaRow(string Source, double SumOfSquares, int DegreesOfFreedom, double MeanSquare, double? F, double? P);

/// <summary>
/// A fitted polynomial response surface with its coefficient table, analysis of variance (model, each term's
/// partial sum of squares, residual split into lack of fit and pure error when runs are replicated, total) and
/// R², adjusted R² and predicted R² (from PRESS). Standard deviations are those of the fitted mean.
/// </summary>
public sealed class PolynomialSurrogate : ISurrogateModel
{
    private readonly FactorEncoding _encoding;
    private readonly double[] _beta;
    private readonly Matrix<double> _covariance;

    internal PolynomialSurrogate(FactorSpace space, FactorEncoding encoding, PolynomialFamily family, TermSelection selection,
        List<PolynomialTerm> terms, LeastSquares fit, double[] x, IReadOnlyList<double> y)
    {
        Space = space;
        _encoding = encoding;
        Family = family;
        Selection = selection;
        Terms = terms;
        _beta = fit.Beta;
        var n = y.Count;
        var p = terms.Count;
        var sst = PolynomialModel.TotalSumOfSquares(y);
        var sse = fit.ResidualSumOfSquares;
        var residualDf = n - p;
        var mse = sse / residualDf;
        _covariance = fit.UnscaledCovariance * mse;
        ResidualMeanSquare = mse;

        var t = StudentT(residualDf);
        Coefficients = [.. terms.Select((term, j) =>
        {
            var se = Math.Sqrt(_covariance[j, j]);
            var tValue = se > 0 ? _beta[j] / se : double.PositiveInfinity;
            return new CoefficientRow(term.Name, _beta[j], se, tValue, 2 * (1 - t(Math.Abs(tValue))));
        })];

        var anova = new List<AnovaRow>();
        var interceptIncluded = terms.Any(term => term.IsIntercept);
        var modelDf = p - (interceptIncluded ? 1 : 0);
        var ssModel = sst - sse;
        anova.Add(Row("Model", ssModel, modelDf, mse, residualDf));
        for (var j = 0; j < p; j++)
        {
            if (terms[j].IsIntercept) continue;
            var partial = _beta[j] * _beta[j] / fit.UnscaledCovariance[j, j];
            anova.Add(Row(terms[j].Name, partial, 1, mse, residualDf));
        }
        anova.Add(new AnovaRow("Residual", sse, residualDf, mse, null, null));
        var (pureError, pureDf) = PureError(x, _encoding.ColumnCount, y);
        var lackDf = residualDf - pureDf;
        if (pureDf > 0 && lackDf > 0)
        {
            var lack = Math.Max(sse - pureError, 0);
            var msPure = pureError / pureDf;
            var f = msPure > 0 ? lack / lackDf / msPure : double.PositiveInfinity;
            anova.Add(new AnovaRow("Lack of fit", lack, lackDf, lack / lackDf, f, UpperTail(f, lackDf, pureDf)));
            anova.Add(new AnovaRow("Pure error", pureError, pureDf, msPure, null, null));
        }
        anova.Add(new AnovaRow("Total", sst, n - 1, sst / (n - 1), null, null));
        Anova = anova;

        RSquared = sst > 0 ? 1 - sse / sst : 1;
        AdjustedRSquared = sst > 0 ? 1 - sse / residualDf / (sst / (n - 1)) : 1;
        Press = fit.Press(y);
        PredictedRSquared = sst > 0 ? 1 - Press / sst : 1;
        var loo = new double[n];
        for (var i = 0; i < n; i++)
        {
            var denominator = 1 - fit.Leverage[i];
            loo[i] = denominator < 1e-10 ? double.NaN : y[i] - (y[i] - fit.Fitted[i]) / denominator;
        }
        CrossValidation = new CrossValidatedPredictions(loo, CrossValidationMethod.LeaveOneOut, n);
        Fitted = fit.Fitted;
    }

    public FactorSpace Space { get; }

    public bool HasUncertainty => true;

    public string Kind => PolynomialTerms.KindOf(Family);

    public string Description => $"{Capitalised(PolynomialTerms.NameOf(Family))} response surface, {Terms.Count} terms" +
        (Selection == TermSelection.None ? "" : $" kept by stepwise {(Selection == TermSelection.StepwiseAicc ? "AICc" : "PRESS")}");

    public PolynomialFamily Family { get; }

    public TermSelection Selection { get; }

    public IReadOnlyList<PolynomialTerm> Terms { get; }

    public IReadOnlyList<CoefficientRow> Coefficients { get; }

    public IReadOnlyList<AnovaRow> Anova { get; }

    public double RSquared { get; }

    public double AdjustedRSquared { get; }

    /// <summary>1 − PRESS/SST.</summary>
    public double PredictedRSquared { get; }

    public double Press { get; }

    public double ResidualMeanSquare { get; }

    /// <summary>Fitted values at the training runs.</summary>
    public IReadOnlyList<double> Fitted { get; }

    /// <summary>Leave-one-out predictions from the hat matrix: yᵢ − eᵢ/(1 − hᵢᵢ) (NaN for a run of leverage 1).</summary>
    public CrossValidatedPredictions CrossValidation { get; private set; }

    /// <summary>The same model with cross-validated predictions made another way (k-fold with re-selection).</summary>
    internal PolynomialSurrogate WithCrossValidation(CrossValidatedPredictions crossValidation)
    {
        var copy = (PolynomialSurrogate)MemberwiseClone();
        copy.CrossValidation = crossValidation;
        return copy;
    }

    public Prediction Predict(Matrix<double> codedPoints)
    {
        ArgumentNullException.ThrowIfNull(codedPoints);
        var count = codedPoints.RowCount;
        var m = _encoding.ColumnCount;
        var p = Terms.Count;
        var encoded = new double[m];
        var row = new double[p];
        var mean = new double[count];
        var sd = new double[count];
        for (var i = 0; i < count; i++)
        {
            _encoding.Encode(codedPoints, i, 1, encoded);
            for (var j = 0; j < p; j++) row[j] = Terms[j].Evaluate(encoded);
            var value = 0.0;
            for (var j = 0; j < p; j++) value += row[j] * _beta[j];
            var variance = 0.0;
            for (var a = 0; a < p; a++)
            {
                var sum = 0.0;
                for (var b = 0; b < p; b++) sum += _covariance[a, b] * row[b];
                variance += row[a] * sum;
            }
            mean[i] = value;
            sd[i] = Math.Sqrt(Math.Max(variance, 0));
        }
        return new Prediction(mean, sd);
    }

    public double[] PredictMean(Matrix<double> codedPoints)
    {
        ArgumentNullException.ThrowIfNull(codedPoints);
        var m = _encoding.ColumnCount;
        var encoded = new double[m];
        var mean = new double[codedPoints.RowCount];
        for (var i = 0; i < mean.Length; i++)
        {
            _encoding.Encode(codedPoints, i, 1, encoded);
            var value = 0.0;
            for (var j = 0; j < Terms.Count; j++) value += Terms[j].Evaluate(encoded) * _beta[j];
            mean[i] = value;
        }
        return mean;
    }

    private static string Capitalised(string text) => char.ToUpperInvariant(text[0]) + text[1..];

    private static Func<double, double> StudentT(int df) =>
        df > 0 ? v => double.IsPositiveInfinity(v) ? 1 : MathNet.Numerics.Distributions.StudentT.CDF(0, 1, df, v) : _ => double.NaN;

    private static AnovaRow Row(string source, double ss, int df, double mse, int residualDf)
    {
        var ms = df > 0 ? ss / df : 0;
        var f = mse > 0 ? ms / mse : double.PositiveInfinity;
        return new AnovaRow(source, ss, df, ms, df > 0 ? f : null, df > 0 ? UpperTail(f, df, residualDf) : null);
    }

    private static double? UpperTail(double f, int df1, int df2) =>
        double.IsPositiveInfinity(f) ? 0 : df2 > 0 ? 1 - FisherSnedecor.CDF(df1, df2, f) : null;

    /// <summary>Sum of squares within groups of runs at the same coded point, and its degrees of freedom.</summary>
    private static (double SumOfSquares, int DegreesOfFreedom) PureError(double[] x, int m, IReadOnlyList<double> y)
    {
        var groups = new Dictionary<string, List<double>>(StringComparer.Ordinal);
        for (var i = 0; i < y.Count; i++)
        {
            var key = string.Join(";", Enumerable.Range(0, m).Select(k => Math.Round(x[i * m + k], 9).ToString("R", System.Globalization.CultureInfo.InvariantCulture)));
            if (!groups.TryGetValue(key, out var list)) groups[key] = list = [];
            list.Add(y[i]);
        }
        var ss = 0.0;
        var df = 0;
        foreach (var values in groups.Values)
        {
            if (values.Count < 2) continue;
            var mean = values.Average();
            ss += values.Sum(v => (v - mean) * (v - mean));
            df += values.Count - 1;
        }
        return (ss, df);
    }
}
