// Latin hypercube sampling (McKay, Beckman & Conover 1979), maximin-optimised by the enhanced stochastic
// evolutionary algorithm on the φp criterion (Jin, Chen & Sudjianto 2005, J. Stat. Plan. Inference 134, 268–287).
namespace Runfold.Shared.Doe;

/// <summary>Options of the maximin search. <see cref="OuterIterations"/> is the most outer iterations (a fixed work
/// budget gives large designs fewer, at least two); the inner loop sizes
/// follow the paper (J = min(pairs/5, 50) swaps tried, M = min(2·pairs·k/J, 100) steps per outer iteration).</summary>
public sealed record LatinHypercubeOptions(int OuterIterations = 40, int Power = 50)
{
    public static LatinHypercubeOptions Default { get; } = new();

    /// <summary>Above this many runs the pairwise-distance table gets too large; the design stays random.</summary>
    public const int MaxOptimisedRuns = 1_000;
}

public static class LatinHypercube
{
    /// <summary>A random Latin hypercube in [0, 1)^k: in every column each of the n strata [i/n, (i+1)/n) holds
    /// exactly one point, placed uniformly inside its stratum.</summary>
    public static double[,] Random(int runs, int dimensions, int seed)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(runs, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(dimensions, 1);
        var random = new Random(seed);
        var strata = RandomStrata(runs, dimensions, random);
        var unit = new double[runs, dimensions];
        for (var i = 0; i < runs; i++)
            for (var j = 0; j < dimensions; j++) unit[i, j] = (strata[i][j] + random.NextDouble()) / runs;
        return unit;
    }

    /// <summary>A maximin Latin hypercube in [0, 1)^k with points at the stratum centres (i + ½)/n: the enhanced
    /// stochastic evolutionary search minimises φp = (Σ d_ij^−p)^(1/p), which for large p maximises the smallest
    /// distance between runs while also spreading the other close pairs.</summary>
    public static double[,] Maximin(int runs, int dimensions, int seed, LatinHypercubeOptions? options = null)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(runs, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(dimensions, 1);
        options ??= LatinHypercubeOptions.Default;
        var random = new Random(seed);
        var strata = RandomStrata(runs, dimensions, random);
        if (runs >= 3 && runs <= LatinHypercubeOptions.MaxOptimisedRuns)
            strata = new EnhancedStochasticEvolution(strata, dimensions, options, random).Run();
        var unit = new double[runs, dimensions];
        for (var i = 0; i < runs; i++)
            for (var j = 0; j < dimensions; j++) unit[i, j] = (strata[i][j] + 0.5) / runs;
        return unit;
    }

    private static int[][] RandomStrata(int runs, int dimensions, Random random)
    {
        var strata = new int[runs][];
        for (var i = 0; i < runs; i++) strata[i] = new int[dimensions];
        var permutation = new int[runs];
        for (var j = 0; j < dimensions; j++)
        {
            for (var i = 0; i < runs; i++) permutation[i] = i;
            random.Shuffle(permutation);
            for (var i = 0; i < runs; i++) strata[i][j] = permutation[i];
        }
        return strata;
    }

    /// <summary>The search works on whole stratum indices, so squared distances are integers and d^−p comes
    /// from a table when that table is small enough. Columns and the distance table are flat arrays: the
    /// inner loop is the whole cost.</summary>
    private sealed class EnhancedStochasticEvolution
    {
        private const int MaxTable = 4_000_000;

        /// <summary>Distance updates one design may spend (each tried swap costs n); large designs get fewer
        /// outer iterations, never fewer than two.</summary>
        private const double WorkBudget = 3e7;

        private readonly int[][] _columns; // _columns[c][i]: stratum of run i in column c
        private readonly int _n;
        private readonly int _k;
        private readonly LatinHypercubeOptions _options;
        private readonly Random _random;
        private readonly int[] _squared; // n × n, row-major
        private readonly double[] _weights; // d^−p of each pair, kept beside the squared distances
        private readonly double[]? _table;
        private readonly double _halfPower;

        public EnhancedStochasticEvolution(int[][] start, int dimensions, LatinHypercubeOptions options, Random random)
        {
            _n = start.Length;
            _k = dimensions;
            _options = options;
            _random = random;
            _halfPower = options.Power / 2.0;
            _columns = new int[_k][];
            for (var c = 0; c < _k; c++)
            {
                _columns[c] = new int[_n];
                for (var i = 0; i < _n; i++) _columns[c][i] = start[i][c];
            }
            _squared = new int[_n * _n];
            for (var a = 0; a < _n; a++)
                for (var b = a + 1; b < _n; b++)
                {
                    var s = 0;
                    for (var c = 0; c < _k; c++) s += (_columns[c][a] - _columns[c][b]) * (_columns[c][a] - _columns[c][b]);
                    _squared[a * _n + b] = _squared[b * _n + a] = s;
                }
            var largest = (long)_k * (_n - 1) * (_n - 1);
            if (largest < MaxTable)
            {
                _table = new double[largest + 1];
                for (var s = 1; s <= largest; s++) _table[s] = Math.Pow(s, -_halfPower);
            }
            _weights = new double[_n * _n];
            for (var i = 0; i < _weights.Length; i++) _weights[i] = _squared[i] == 0 ? 0 : Weight(_squared[i]);
        }

        private double Weight(int squared) => _table is { } t ? t[squared] : Math.Pow(squared, -_halfPower);

        private double Sum()
        {
            double sum = 0;
            for (var a = 0; a < _n; a++)
                for (var b = a + 1; b < _n; b++) sum += _weights[a * _n + b];
            return sum;
        }

        private double Phi(double sum) => Math.Pow(sum, 1.0 / _options.Power);

        /// <summary>Change of Σ d^−p when rows r1 and r2 swap their values in column c.</summary>
        private double SwapDelta(int r1, int r2, int c)
        {
            var column = _columns[c];
            var a = column[r1];
            var b = column[r2];
            var squared1 = _squared.AsSpan(r1 * _n, _n);
            var squared2 = _squared.AsSpan(r2 * _n, _n);
            var weights1 = _weights.AsSpan(r1 * _n, _n);
            var weights2 = _weights.AsSpan(r2 * _n, _n);
            double delta = 0;
            for (var j = 0; j < _n; j++)
            {
                if (j == r1 || j == r2) continue;
                var xj = column[j];
                var change = (b - xj) * (b - xj) - (a - xj) * (a - xj);
                if (change == 0) continue;
                delta += Weight(squared1[j] + change) - weights1[j] + Weight(squared2[j] - change) - weights2[j];
            }
            return delta;
        }

        private void Swap(int r1, int r2, int c)
        {
            var column = _columns[c];
            var a = column[r1];
            var b = column[r2];
            for (var j = 0; j < _n; j++)
            {
                if (j == r1 || j == r2) continue;
                var xj = column[j];
                var change = (b - xj) * (b - xj) - (a - xj) * (a - xj);
                if (change == 0) continue;
                Set(r1, j, _squared[r1 * _n + j] + change);
                Set(r2, j, _squared[r2 * _n + j] - change);
            }
            column[r1] = b;
            column[r2] = a;
        }

        private void Set(int a, int b, int squared)
        {
            var weight = Weight(squared);
            _squared[a * _n + b] = _squared[b * _n + a] = squared;
            _weights[a * _n + b] = _weights[b * _n + a] = weight;
        }

        public int[][] Run()
        {
            var pairs = _n * (_n - 1) / 2;
            var tries = Math.Clamp(pairs / 5, 1, 50);
            var steps = Math.Clamp(2 * pairs * _k / tries, 1, 100);
            var perOuter = (double)steps * tries * _n + _n * (double)_n / 2;
            var outerIterations = (int)Math.Clamp(WorkBudget / perOuter, 2, _options.OuterIterations);
            var sum = Sum();
            var phi = Phi(sum);
            var best = Snapshot();
            var bestPhi = phi;
            var threshold = 0.005 * phi;

            for (var outer = 0; outer < outerIterations; outer++)
            {
                var bestBefore = bestPhi;
                int accepted = 0, improved = 0;
                for (var step = 0; step < steps; step++)
                {
                    var column = step % _k;
                    int bestR1 = 0, bestR2 = 1;
                    var bestDelta = double.PositiveInfinity;
                    for (var t = 0; t < tries; t++)
                    {
                        var r1 = _random.Next(_n);
                        var r2 = _random.Next(_n - 1);
                        if (r2 >= r1) r2++;
                        var delta = SwapDelta(r1, r2, column);
                        if (delta < bestDelta) (bestDelta, bestR1, bestR2) = (delta, r1, r2);
                    }
                    // A swap that removes the dominant close pairs takes nearly all of the sum away; the
                    // difference then loses its digits, so such a trial is summed afresh.
                    var exact = sum + bestDelta < 1e-4 * sum;
                    if (exact) Swap(bestR1, bestR2, column);
                    var trialSum = exact ? Sum() : sum + bestDelta;
                    var trial = Phi(trialSum);
                    if (trial - phi <= threshold * _random.NextDouble())
                    {
                        if (!exact) Swap(bestR1, bestR2, column);
                        sum = trialSum;
                        phi = trial;
                        accepted++;
                        if (phi < bestPhi)
                        {
                            best = Snapshot();
                            bestPhi = phi;
                            improved++;
                        }
                    }
                    else if (exact) Swap(bestR1, bestR2, column); // undo
                }
                sum = Sum(); // the running sum drifts by rounding; start each outer iteration exact
                phi = Phi(sum);

                // Threshold control of Jin, Chen & Sudjianto (2005), §3.2: α1 = 0.8, α2 = 0.9, α3 = 0.7.
                var acceptRatio = (double)accepted / steps;
                var improveRatio = (double)improved / steps;
                if (bestPhi < bestBefore)
                {
                    if (acceptRatio > 0.1 && improveRatio < acceptRatio) threshold *= 0.8;
                    else if (!(acceptRatio > 0.1 && improveRatio == acceptRatio)) threshold /= 0.8;
                }
                else if (acceptRatio < 0.1) threshold /= 0.7;
                else if (acceptRatio > 0.8) threshold *= 0.9;
            }
            return best;
        }

        /// <summary>The current design as rows (run → strata).</summary>
        private int[][] Snapshot()
        {
            var rows = new int[_n][];
            for (var i = 0; i < _n; i++)
            {
                rows[i] = new int[_k];
                for (var c = 0; c < _k; c++) rows[i][c] = _columns[c][i];
            }
            return rows;
        }
    }
}
