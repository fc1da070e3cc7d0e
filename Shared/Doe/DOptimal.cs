// D-optimal designs by coordinate exchange (Meyer & Nachtsheim 1995, Technometrics 37, 60–69), polished by
// Fedorov's point exchange over the candidate set when it is small enough to list (Fedorov 1972).
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>The allowed coded levels per factor (the candidate set is their product, less the runs that break a
/// constraint), the model, the run count and the random starts.</summary>
public sealed record DOptimalOptions(
    int Runs,
    DesignModelKind Model,
    IReadOnlyList<double[]> Levels,
    DesignConstraints Constraints,
    int Seed,
    int Starts = 8)
{
    /// <summary>Candidate sets up to this size are listed, for the feasibility count and random starts.</summary>
    public const int MaxListedCandidates = 50_000;
}

public static class DOptimal
{
    /// <summary>The default allowed levels: continuous factors at 3 evenly spaced levels (5 when constraints cut
    /// the region, so runs can follow its edge), integer factors at their whole values when there are no more
    /// than that many, else evenly spaced whole values, categorical factors at every level.</summary>
    public static double[] DefaultLevels(Factor factor, bool constrained)
    {
        ArgumentNullException.ThrowIfNull(factor);
        var count = constrained ? 5 : 3;
        if (factor.IsCategorical) return FullFactorial.LevelPositions(factor, factor.Levels.Count);
        if (factor.Kind == FactorKind.Integer) count = (int)Math.Min(count, factor.High - factor.Low + 1);
        return [.. FullFactorial.LevelPositions(factor, count).Distinct()];
    }

    /// <summary>Finds the design; null with a sentence when the candidate set has fewer distinct feasible runs than
    /// asked for.</summary>
    public static Matrix<double>? Generate(FactorSpace space, DOptimalOptions options, out string? problem)
    {
        ArgumentNullException.ThrowIfNull(space);
        ArgumentNullException.ThrowIfNull(options);
        return new Search(space, options).Run(out problem);
    }

    private sealed class Search
    {
        private readonly FactorSpace _space;
        private readonly DOptimalOptions _o;
        private readonly DesignModel _model;
        private readonly int _p;
        private readonly int _k;
        private readonly List<int[]>? _candidates;
        private readonly double _ridge;


        public Search(FactorSpace space, DOptimalOptions options)
        {
            _space = space;
            _o = options;
            _model = new DesignModel(space, options.Model);
            _p = _model.TermCount;
            _k = space.Count;
            _ridge = 1e-6 * options.Runs;
            var size = options.Levels.Aggregate(1.0, (s, l) => s * l.Length);
            if (size <= DOptimalOptions.MaxListedCandidates) _candidates = ListCandidates();
        }

        private List<int[]> ListCandidates()
        {
            var list = new List<int[]>();
            var index = new int[_k];
            while (true)
            {
                if (Feasible(index)) list.Add((int[])index.Clone());
                var j = 0;
                while (j < _k && ++index[j] == _o.Levels[j].Length) index[j++] = 0;
                if (j == _k) return list;
            }
        }

        private double[] Coded(int[] index)
        {
            var coded = new double[_k];
            for (var j = 0; j < _k; j++) coded[j] = _o.Levels[j][index[j]];
            return coded;
        }

        private bool Feasible(int[] index) => _o.Constraints.IsEmpty || _o.Constraints.IsFeasible(_space.FromCoded(Coded(index)));

        private double[] Terms(int[] index)
        {
            var terms = new double[_p];
            _model.Row(Coded(index), terms);
            return terms;
        }

        private static string Key(int[] index) => string.Join(",", index);

        public Matrix<double>? Run(out string? problem)
        {
            problem = null;
            if (_candidates is { } listed && listed.Count < _o.Runs)
            {
                problem = $"Only {listed.Count} distinct combinations of the allowed factor levels satisfy the constraints; " +
                          $"{_o.Runs} runs cannot all differ. Ask for fewer runs or allow more levels.";
                return null;
            }
            var random = new Random(_o.Seed);
            int[][]? best = null;
            var bestLogDet = double.NegativeInfinity;
            var candidateTerms = _candidates is { Count: <= MaxPointExchange } c ? c.Select(Terms).ToArray() : null;
            for (var start = 0; start < _o.Starts; start++)
            {
                var design = Start(random);
                if (design is null)
                {
                    problem = "No feasible starting design was found among the allowed factor levels; the constraints leave too little room.";
                    return null;
                }
                CoordinateExchange(design);
                if (candidateTerms is not null) PointExchange(design, candidateTerms);
                var logDet = LogDet(design);
                if (logDet > bestLogDet + 1e-9 || best is null) (best, bestLogDet) = (design, logDet);
            }
            var coded = Matrix<double>.Build.Dense(_o.Runs, _k);
            for (var i = 0; i < _o.Runs; i++)
            {
                var row = Coded(best![i]);
                for (var j = 0; j < _k; j++) coded[i, j] = row[j];
            }
            return coded;
        }

        private const int MaxPointExchange = 1_000; // larger sets: coordinate exchange alone (its moves cover the same grid)

        private int[][]? Start(Random random)
        {
            if (_candidates is { } listed)
            {
                var order = Enumerable.Range(0, listed.Count).ToArray();
                random.Shuffle(order);
                return [.. order.Take(_o.Runs).Select(i => (int[])listed[i].Clone())];
            }
            var design = new List<int[]>();
            var seen = new HashSet<string>();
            for (var attempt = 0; design.Count < _o.Runs && attempt < 1000 * _o.Runs; attempt++)
            {
                var index = new int[_k];
                for (var j = 0; j < _k; j++) index[j] = random.Next(_o.Levels[j].Length);
                if (Feasible(index) && seen.Add(Key(index))) design.Add(index);
            }
            return design.Count == _o.Runs ? [.. design] : null;
        }

        private Matrix<double> Information(int[][] design, double ridge)
        {
            var m = Matrix<double>.Build.DenseIdentity(_p) * ridge;
            foreach (var run in design)
            {
                var x = Vector<double>.Build.Dense(Terms(run));
                m += x.OuterProduct(x);
            }
            return m;
        }

        /// <summary>(X'X + δI)⁻¹ as a row-major array; the small ridge δ lets a singular start improve.</summary>
        private double[] Inverse(int[][] design) => Information(design, _ridge).Inverse().ToRowMajorArray();

        private double LogDet(int[][] design)
        {
            var eigen = Information(design, 0).Evd(Symmetricity.Symmetric).EigenValues.Select(e => e.Real).ToArray();
            return eigen.Min() <= 1e-10 * Math.Max(eigen.Max(), 1e-300) ? double.NegativeInfinity : eigen.Sum(Math.Log);
        }

        private void Multiply(double[] a, double[] x, double[] result)
        {
            for (var r = 0; r < _p; r++)
            {
                double sum = 0;
                var offset = r * _p;
                for (var c = 0; c < _p; c++) sum += a[offset + c] * x[c];
                result[r] = sum;
            }
        }

        private static double Dot(double[] a, double[] b)
        {
            double sum = 0;
            for (var i = 0; i < a.Length; i++) sum += a[i] * b[i];
            return sum;
        }

        /// <summary>det(M − x xᵀ + y yᵀ) / det(M) with A = M⁻¹, given Ax and xᵀAx (Fedorov's exchange ratio).</summary>
        private double Ratio(double[] a, double[] ax, double dx, double[] y, double[] scratch)
        {
            Multiply(a, y, scratch);
            var dy = Dot(y, scratch);
            var dxy = Dot(y, ax);
            return (1 + dy) * (1 - dx) + dxy * dxy;
        }

        /// <summary>A ← (M − x xᵀ + y yᵀ)⁻¹ by two Sherman–Morrison steps.</summary>
        private void Exchange(double[] a, double[] x, double[] y, double[] scratch)
        {
            Multiply(a, y, scratch);
            var scale = 1 / (1 + Dot(y, scratch));
            for (var r = 0; r < _p; r++)
                for (var c = 0; c < _p; c++) a[r * _p + c] -= scratch[r] * scratch[c] * scale;
            Multiply(a, x, scratch);
            scale = 1 / (1 - Dot(x, scratch));
            for (var r = 0; r < _p; r++)
                for (var c = 0; c < _p; c++) a[r * _p + c] += scratch[r] * scratch[c] * scale;
        }

        private void CoordinateExchange(int[][] design)
        {
            var keys = new HashSet<string>(design.Select(Key));
            var ax = new double[_p];
            var scratch = new double[_p];
            for (var pass = 0; pass < 50; pass++)
            {
                var a = Inverse(design); // fresh each pass so the rank-two updates do not drift
                var improved = false;
                for (var i = 0; i < design.Length; i++)
                    for (var j = 0; j < _k; j++)
                    {
                        var run = design[i];
                        var x = Terms(run);
                        Multiply(a, x, ax);
                        var dx = Dot(x, ax);
                        var (bestLevel, bestRatio) = (-1, 1 + 1e-9);
                        var current = run[j];
                        for (var l = 0; l < _o.Levels[j].Length; l++)
                        {
                            if (l == current) continue;
                            run[j] = l;
                            if (Feasible(run))
                            {
                                var ratio = Ratio(a, ax, dx, Terms(run), scratch);
                                if (ratio > bestRatio && !keys.Contains(Key(run))) (bestLevel, bestRatio) = (l, ratio);
                            }
                            run[j] = current;
                        }
                        if (bestLevel < 0) continue;
                        keys.Remove(Key(run));
                        run[j] = bestLevel;
                        keys.Add(Key(run));
                        Exchange(a, x, Terms(run), scratch);
                        improved = true;
                    }
                if (!improved) return;
            }
        }

        private void PointExchange(int[][] design, double[][] terms)
        {
            var candidates = _candidates!;
            var keys = new HashSet<string>(design.Select(Key));
            var ax = new double[_p];
            var scratch = new double[_p];
            for (var pass = 0; pass < 20; pass++)
            {
                var a = Inverse(design);
                var improved = false;
                for (var i = 0; i < design.Length; i++)
                {
                    var x = Terms(design[i]);
                    Multiply(a, x, ax);
                    var dx = Dot(x, ax);
                    var (best, bestRatio) = (-1, 1 + 1e-9);
                    for (var c = 0; c < candidates.Count; c++)
                    {
                        var ratio = Ratio(a, ax, dx, terms[c], scratch);
                        if (ratio > bestRatio && !keys.Contains(Key(candidates[c]))) (best, bestRatio) = (c, ratio);
                    }
                    if (best < 0) continue;
                    keys.Remove(Key(design[i]));
                    design[i] = (int[])candidates[best].Clone();
                    keys.Add(Key(design[i]));
                    Exchange(a, x, terms[best], scratch);
                    improved = true;
                }
                if (!improved) return;
            }
        }
    }
}
