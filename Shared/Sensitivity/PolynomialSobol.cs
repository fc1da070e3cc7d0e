// Exact Sobol' indices of a polynomial response surface from its functional ANOVA (Hoeffding–Sobol' decomposition,
// Sobol' 1993, "Sensitivity estimates for nonlinear mathematical models", Math. Model. Comput. Exp. 1: 407–414).
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling;
using Runfold.Shared.Modeling.Polynomial;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Sensitivity;

/// <summary>The exact indices of a polynomial, per factor in factor order, with the mean and variance of the
/// polynomial over the factor box.</summary>
public sealed record AnalyticSobolIndices(
    IReadOnlyList<string> Names,
    IReadOnlyList<double> FirstOrder,
    IReadOnlyList<double> Total,
    double Mean,
    double Variance);

/// <summary>
/// Each term of a polynomial is a product of one function per factor (1, x, x², or a level indicator). Writing every
/// such function as its mean plus a centred part and multiplying out gives the ANOVA components directly: the part of
/// term t that varies in exactly the factors u is βₜ·Π_{j∉u} E[gₜⱼ]·Π_{j∈u}(gₜⱼ − E[gₜⱼ]); components of different u are
/// orthogonal because factors are independent, so Var(f_u) = Σₜ Σₜ′ cₜ cₜ′ Π_{j∈u} Cov(gₜⱼ, gₜ′ⱼ). The moments come
/// from rules that are exact for the factor's distribution (the same one <see cref="SobolAnalysis"/> samples):
/// three-point Gauss–Legendre for a continuous factor (exact to degree 5; a quadratic model needs 4), every whole
/// value of an integer factor, every level of a categorical one.
/// </summary>
public static class PolynomialSobol
{
    /// <summary>Integer factors with more whole values than this are treated as continuous (the difference is
    /// below 1e-8 of the variance).</summary>
    private const int MaxIntegerValues = 10_001;

    public static AnalyticSobolIndices Analytic(PolynomialSurrogate model)
    {
        ArgumentNullException.ThrowIfNull(model);
        var space = model.Space;
        var k = space.Count;
        var encoding = new FactorEncoding(space, dropFirstLevel: true);
        var atoms = new (double[] Values, double[] Weights, double[] Encoded, int Columns)[k];
        for (var j = 0; j < k; j++) atoms[j] = Atoms(space, j, encoding);

        var terms = model.Terms;
        var beta = model.Coefficients.Select(c => c.Estimate).ToArray();
        // gₜⱼ at the atoms of factor j, for each term t and each factor j the term contains.
        var parts = new Dictionary<int, double[]>[terms.Count];
        var means = new Dictionary<int, double>[terms.Count];
        for (var t = 0; t < terms.Count; t++)
        {
            parts[t] = [];
            means[t] = [];
            foreach (var j in terms[t].Columns.Select(c => encoding.FactorOfColumn[c]).Distinct())
            {
                var (_, weights, encoded, columns) = atoms[j];
                var g = new double[weights.Length];
                for (var a = 0; a < g.Length; a++)
                {
                    var value = 1.0;
                    foreach (var c in terms[t].Columns)
                        if (encoding.FactorOfColumn[c] == j) value *= encoded[a * columns + c];
                    g[a] = value;
                }
                parts[t][j] = g;
                means[t][j] = Expect(weights, g);
            }
        }

        var mean = 0.0;
        for (var t = 0; t < terms.Count; t++) mean += beta[t] * means[t].Values.Aggregate(1.0, (p, m) => p * m);

        // Every non-empty subset u of some term's factors.
        var subsets = new HashSet<(int, int)>();
        foreach (var partsOfTerm in parts)
        {
            var factors = partsOfTerm.Keys.Order().ToArray();
            if (factors.Length > 2)
                throw new InvalidOperationException("A term of more than two factors is not expected in a second-order response surface.");
            foreach (var j in factors) subsets.Add((j, -1));
            if (factors.Length == 2) subsets.Add((factors[0], factors[1]));
        }

        var components = new Dictionary<(int, int), double>();
        foreach (var u in subsets)
        {
            int[] members = u.Item2 < 0 ? [u.Item1] : [u.Item1, u.Item2];
            var involved = Enumerable.Range(0, terms.Count).Where(t => members.All(parts[t].ContainsKey)).ToArray();
            var coefficient = involved.Select(t => beta[t] * parts[t].Keys.Where(j => !members.Contains(j))
                .Aggregate(1.0, (p, j) => p * means[t][j])).ToArray();
            var variance = 0.0;
            for (var a = 0; a < involved.Length; a++)
                for (var b = 0; b < involved.Length; b++)
                {
                    var product = coefficient[a] * coefficient[b];
                    foreach (var j in members)
                        product *= Covariance(atoms[j].Weights, parts[involved[a]][j], parts[involved[b]][j]);
                    variance += product;
                }
            components[u] = Math.Max(variance, 0);
        }

        var total = components.Values.Sum();
        var first = new double[k];
        var totals = new double[k];
        if (total > 0)
            foreach (var (u, v) in components)
            {
                if (u.Item2 < 0) first[u.Item1] += v / total;
                totals[u.Item1] += v / total;
                if (u.Item2 >= 0) totals[u.Item2] += v / total;
            }
        return new AnalyticSobolIndices([.. space.Factors.Select(f => f.Name)], first, totals, mean, total);
    }

    private static double Expect(double[] weights, double[] g)
    {
        var sum = 0.0;
        for (var a = 0; a < g.Length; a++) sum += weights[a] * g[a];
        return sum;
    }

    private static double Covariance(double[] weights, double[] g, double[] h)
    {
        double gh = 0, mg = 0, mh = 0;
        for (var a = 0; a < g.Length; a++)
        {
            gh += weights[a] * g[a] * h[a];
            mg += weights[a] * g[a];
            mh += weights[a] * h[a];
        }
        return gh - mg * mh;
    }

    /// <summary>The quadrature points of factor j in coded units with their probabilities, and the encoded row of
    /// each (only factor j's columns are read).</summary>
    private static (double[] Values, double[] Weights, double[] Encoded, int Columns) Atoms(FactorSpace space, int j, FactorEncoding encoding)
    {
        var factor = space[j];
        double[] values;
        double[] weights;
        var integerValues = factor.Kind == FactorKind.Integer ? (long)(factor.High - factor.Low) + 1 : 0;
        if (factor.IsCategorical || (factor.Kind == FactorKind.Integer && integerValues <= MaxIntegerValues))
        {
            var count = factor.IsCategorical ? factor.Levels.Count : (int)integerValues;
            values = [.. Enumerable.Range(0, count).Select(i => factor.ToCoded(factor.Low + i))];
            weights = [.. Enumerable.Repeat(1.0 / count, count)];
        }
        else
        {
            var node = Math.Sqrt(3.0 / 5);
            values = [-node, 0, node];
            weights = [5.0 / 18, 8.0 / 18, 5.0 / 18];
        }
        var rows = Matrix<double>.Build.Dense(values.Length, space.Count, (r, c) => c == j ? values[r] : 0);
        return (values, weights, encoding.Encode(rows), encoding.ColumnCount);
    }
}
