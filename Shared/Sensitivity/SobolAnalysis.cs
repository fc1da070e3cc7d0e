// Sobol' first-order and total-effect indices by the sampling scheme of Saltelli et al. (2010, "Variance based
// sensitivity analysis of model output", Comput. Phys. Commun. 181: 259–270, Table 2 (b) and (f), i.e. Jansen 1999).
using System.Diagnostics;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Modeling;

namespace Runfold.Shared.Sensitivity;

/// <summary>How the indices are estimated.</summary>
public sealed record SobolOptions
{
    /// <summary>N, the rows of each of the matrices A and B; the surrogate is evaluated N·(k + 2) times. A power of
    /// two keeps the Sobol' points balanced. Ignored when <see cref="TimeBudget"/> is set.</summary>
    public int BaseSamples { get; init; } = 4096;

    /// <summary>Resamples of the N rows for the 95 % percentile intervals (0: intervals equal the estimates).</summary>
    public int BootstrapResamples { get; init; } = 100;

    public int Seed { get; init; } = 1;

    /// <summary>When set, N is the largest power of two between <see cref="MinBaseSamples"/> and
    /// <see cref="MaxBaseSamples"/> whose evaluations and bootstrap fit in this time, measured as the work goes
    /// (so N depends on the machine; the points themselves depend only on the seed).</summary>
    public TimeSpan? TimeBudget { get; init; }

    public int MinBaseSamples { get; init; } = 256;

    public int MaxBaseSamples { get; init; } = 1 << 16;

    public static SobolOptions Default { get; } = new();

    internal void Check()
    {
        if (BaseSamples < 2) throw new ArgumentException("At least two base samples are needed.", nameof(BaseSamples));
        if (BootstrapResamples < 0) throw new ArgumentException("The number of bootstrap resamples cannot be negative.", nameof(BootstrapResamples));
        if (MinBaseSamples < 2 || MaxBaseSamples < MinBaseSamples)
            throw new ArgumentException("The base-sample bounds must be at least 2 and increasing.", nameof(MinBaseSamples));
        if (TimeBudget is { } budget && budget <= TimeSpan.Zero)
            throw new ArgumentException("The time budget must be positive.", nameof(TimeBudget));
    }
}

/// <summary>Which way a factor moves the response over its range: the sign of its mean partial derivative.</summary>
public enum EffectDirection
{
    /// <summary>The response rises with the factor nearly everywhere.</summary>
    Raises,

    /// <summary>The response falls with the factor nearly everywhere.</summary>
    Lowers,

    /// <summary>It rises in some places and falls in others (a maximum or minimum inside the range, an
    /// interaction that flips the sign, or a categorical factor, whose level order carries no direction).</summary>
    Mixed,

    /// <summary>The factor has no noticeable effect.</summary>
    None,
}

/// <summary>The indices of one factor with their bootstrap 95 % intervals. <see cref="MeanSlope"/> is the mean
/// change of the response per coded unit (half the range) of the factor.</summary>
public sealed record FactorSobolIndex(
    string Name,
    double FirstOrder,
    double FirstOrderLow,
    double FirstOrderHigh,
    double Total,
    double TotalLow,
    double TotalHigh,
    EffectDirection Direction,
    double MeanSlope);

/// <summary>The indices of one response, per factor in factor order, and what they were estimated from.</summary>
public sealed record SobolIndices(
    IReadOnlyList<FactorSobolIndex> Factors,
    int BaseSamples,
    int Evaluations,
    int BootstrapResamples,
    double Mean,
    double Variance)
{
    /// <summary>Factor positions ordered by total index, largest first: the sensitivity ranking.</summary>
    public IReadOnlyList<int> Ranking => [.. Enumerable.Range(0, Factors.Count).OrderByDescending(i => Factors[i].Total)];
}

/// <summary>
/// Variance-based sensitivity of a surrogate over the factor box: every factor independent and uniform over its
/// coded range (log-uniform for a log-scale factor), integer factors equally likely at each whole value and
/// categorical factors at each level. Constraints between factors are not applied: the indices assume independent
/// factors, as their definition does.
/// </summary>
public static class SobolAnalysis
{
    /// <summary>Base rows evaluated per call of the surrogate (each call predicts (k + 2) times as many points).</summary>
    private const int ChunkRows = 1024;

    /// <summary>Below this total index a factor's direction is reported as none (our own threshold).</summary>
    public const double NegligibleTotal = 0.005;

    /// <summary>
    /// Estimates the indices. A scrambled Sobol' sequence of dimension 2k gives A (first k columns) and B (last k);
    /// Aᵢ_B is A with column i from B. First order Sᵢ = mean(f(B)·(f(Aᵢ_B) − f(A)))/V (Saltelli 2010), total
    /// Tᵢ = mean((f(A) − f(Aᵢ_B))²)/(2V) (Jansen 1999), V the variance of f over A and B together. The direction
    /// comes from the same pairs: each A row and its Aᵢ_B row differ only in factor i.
    /// </summary>
    public static SobolIndices Estimate(IResponseSurrogate surrogate, SobolOptions? options = null, CancellationToken cancellation = default)
    {
        ArgumentNullException.ThrowIfNull(surrogate);
        options ??= SobolOptions.Default;
        options.Check();
        var space = surrogate.Space;
        var k = space.Count;
        if (2 * k > SobolSequence.MaxDimensions)
            throw new ArgumentException($"Sobol' indices of {k} factors need a {2 * k}-dimensional sequence; at most {SobolSequence.MaxDimensions / 2} factors are supported.", nameof(surrogate));
        var watch = Stopwatch.StartNew();
        var samples = new SampleSet(k);

        if (options.TimeBudget is not { } budget)
        {
            Evaluate(surrogate, samples, 0, options.BaseSamples, options.Seed, cancellation);
        }
        else
        {
            // Doubling steps: each step's cost is predicted from the one before it (twice the rows), the bootstrap's
            // from a small trial, so the sample stops growing before the budget is spent.
            var n = Math.Min(options.MinBaseSamples, options.MaxBaseSamples);
            Evaluate(surrogate, samples, 0, n, options.Seed, cancellation);
            var bootstrapPerRow = BootstrapCostPerRow(samples, n, options);
            var stepSeconds = watch.Elapsed.TotalSeconds;
            while (2L * n <= options.MaxBaseSamples)
            {
                var predicted = watch.Elapsed.TotalSeconds + 2 * stepSeconds + bootstrapPerRow * 2 * n;
                if (predicted > budget.TotalSeconds) break;
                var before = watch.Elapsed.TotalSeconds;
                Evaluate(surrogate, samples, n, 2 * n, options.Seed, cancellation);
                stepSeconds = Math.Max(watch.Elapsed.TotalSeconds - before, 1e-6);
                n *= 2;
            }
        }

        cancellation.ThrowIfCancellationRequested();
        return Indices(space.Factors.Select(f => f.Name).ToArray(), space.Factors.Select(f => f.IsCategorical).ToArray(),
            samples, options, cancellation);
    }

    /// <summary>The surrogate's values on A, B and every Aᵢ_B, with the coded steps Bᵢ − Aᵢ.</summary>
    private sealed class SampleSet(int factors)
    {
        public int Factors { get; } = factors;
        public List<double> A { get; } = [];
        public List<double> B { get; } = [];
        public List<double>[] Mixed { get; } = [.. Enumerable.Range(0, factors).Select(_ => new List<double>())];
        public List<double>[] Steps { get; } = [.. Enumerable.Range(0, factors).Select(_ => new List<double>())];
        public int Count => A.Count;
    }

    /// <summary>Evaluates base rows from…to−1 of the sequence, in chunks, appending to <paramref name="samples"/>.</summary>
    private static void Evaluate(IResponseSurrogate surrogate, SampleSet samples, int from, int to, int seed, CancellationToken cancellation)
    {
        var space = surrogate.Space;
        var k = space.Count;
        var unit = SobolSequence.Generate(to, 2 * k, scramble: true, seed: seed);
        for (var start = from; start < to; start += ChunkRows)
        {
            cancellation.ThrowIfCancellationRequested();
            var rows = Math.Min(ChunkRows, to - start);
            var blocks = k + 2;
            // Column-major storage: block 0 = A, 1 = B, 2 + i = Aᵢ_B.
            var storage = new double[blocks * rows * k];
            var total = blocks * rows;
            for (var j = 0; j < k; j++)
            {
                var factor = space[j];
                for (var r = 0; r < rows; r++)
                {
                    var a = UnitCube.ToCoded(factor, unit[start + r, j]);
                    var b = UnitCube.ToCoded(factor, unit[start + r, k + j]);
                    storage[j * total + r] = a;
                    storage[j * total + rows + r] = b;
                    for (var i = 0; i < k; i++) storage[j * total + (2 + i) * rows + r] = i == j ? b : a;
                    samples.Steps[j].Add(b - a);
                }
            }
            var mean = surrogate.PredictMean(Matrix<double>.Build.Dense(total, k, storage));
            samples.A.AddRange(mean.AsSpan(0, rows));
            samples.B.AddRange(mean.AsSpan(rows, rows));
            for (var i = 0; i < k; i++) samples.Mixed[i].AddRange(mean.AsSpan((2 + i) * rows, rows));
        }
    }

    /// <summary>Seconds the whole bootstrap will take per base row, from a short trial on the rows there are.</summary>
    private static double BootstrapCostPerRow(SampleSet samples, int n, SobolOptions options)
    {
        if (options.BootstrapResamples == 0) return 0;
        var arrays = Arrays(samples, n);
        var trial = Math.Min(options.BootstrapResamples, 4);
        var first = new double[samples.Factors];
        var total = new double[samples.Factors];
        var watch = Stopwatch.StartNew();
        for (var r = 0; r < trial; r++) ResampleAll(arrays, new Random(r), first, total);
        return watch.Elapsed.TotalSeconds / trial / n * options.BootstrapResamples / Math.Max(Environment.ProcessorCount, 1);
    }

    private sealed record ValueArrays(double[] A, double[] B, double[][] Mixed, int Count);

    private static ValueArrays Arrays(SampleSet samples, int n) =>
        new([.. samples.A.Take(n)], [.. samples.B.Take(n)], [.. samples.Mixed.Select(m => m.Take(n).ToArray())], n);

    private static SobolIndices Indices(string[] names, bool[] categorical, SampleSet samples, SobolOptions options, CancellationToken cancellation)
    {
        var k = names.Length;
        var n = samples.Count;
        var arrays = Arrays(samples, n);
        var (mean, variance) = MeanAndVariance(arrays, null);
        var first = new double[k];
        var total = new double[k];
        for (var i = 0; i < k; i++) (first[i], total[i]) = Pair(arrays, i, null, variance);

        var resamples = options.BootstrapResamples;
        var firstDraws = new double[k][];
        var totalDraws = new double[k][];
        for (var i = 0; i < k; i++)
        {
            firstDraws[i] = new double[resamples];
            totalDraws[i] = new double[resamples];
        }
        // Each resample has its own generator seeded from (seed, resample), so threads do not change the draws (and
        // no process-randomised hash is involved, so every run draws the same).
        Parallel.For(0, resamples, new ParallelOptions { CancellationToken = cancellation }, r =>
        {
            var random = new Random(unchecked(options.Seed * 1_000_003 + r * 7_919 + 17));
            var f = new double[k];
            var t = new double[k];
            ResampleAll(arrays, random, f, t);
            for (var i = 0; i < k; i++)
            {
                firstDraws[i][r] = f[i];
                totalDraws[i][r] = t[i];
            }
        });

        var factors = new FactorSobolIndex[k];
        for (var i = 0; i < k; i++)
        {
            var (firstLow, firstHigh) = Interval(firstDraws[i], first[i]);
            var (totalLow, totalHigh) = Interval(totalDraws[i], total[i]);
            var (direction, slope) = Direction(arrays, samples.Steps[i], i, total[i], variance, categorical[i]);
            factors[i] = new FactorSobolIndex(names[i], first[i], firstLow, firstHigh, total[i], totalLow, totalHigh, direction, slope);
        }
        return new SobolIndices(factors, n, n * (k + 2), resamples, mean, variance);
    }

    /// <summary>Mean and population variance of f over the rows of A and B (all rows, or the resampled ones).</summary>
    private static (double Mean, double Variance) MeanAndVariance(ValueArrays v, int[]? rows)
    {
        var n = rows?.Length ?? v.Count;
        double sum = 0, squares = 0;
        for (var r = 0; r < n; r++)
        {
            var j = rows is null ? r : rows[r];
            sum += v.A[j] + v.B[j];
        }
        var mean = sum / (2 * n);
        for (var r = 0; r < n; r++)
        {
            var j = rows is null ? r : rows[r];
            squares += (v.A[j] - mean) * (v.A[j] - mean) + (v.B[j] - mean) * (v.B[j] - mean);
        }
        return (mean, squares / (2 * n));
    }

    /// <summary>First-order (Saltelli 2010) and total (Jansen 1999) index of factor i.</summary>
    private static (double First, double Total) Pair(ValueArrays v, int i, int[]? rows, double variance)
    {
        if (!(variance > 0)) return (0, 0);
        var n = rows?.Length ?? v.Count;
        var mixed = v.Mixed[i];
        double first = 0, total = 0;
        for (var r = 0; r < n; r++)
        {
            var j = rows is null ? r : rows[r];
            var difference = mixed[j] - v.A[j];
            first += v.B[j] * difference;
            total += difference * difference;
        }
        return (first / n / variance, total / (2.0 * n) / variance);
    }

    private static void ResampleAll(ValueArrays v, Random random, double[] first, double[] total)
    {
        var n = v.Count;
        var rows = new int[n];
        for (var r = 0; r < n; r++) rows[r] = random.Next(n);
        var (_, variance) = MeanAndVariance(v, rows);
        for (var i = 0; i < first.Length; i++) (first[i], total[i]) = Pair(v, i, rows, variance);
    }

    /// <summary>The 2.5 % and 97.5 % percentiles of the resampled values (linear interpolation); the estimate
    /// itself when there are no resamples.</summary>
    private static (double Low, double High) Interval(double[] draws, double estimate)
    {
        if (draws.Length == 0) return (estimate, estimate);
        var sorted = (double[])draws.Clone();
        Array.Sort(sorted);
        return (Quantile(sorted, 0.025), Quantile(sorted, 0.975));
    }

    internal static double Quantile(double[] sorted, double p)
    {
        var position = p * (sorted.Length - 1);
        var below = (int)Math.Floor(position);
        var above = Math.Min(below + 1, sorted.Length - 1);
        return sorted[below] + (position - below) * (sorted[above] - sorted[below]);
    }

    /// <summary>
    /// The mean partial derivative from the secant slopes (f(Aᵢ_B) − f(A))/(Bᵢ − Aᵢ) of the sample pairs. The effect
    /// raises (lowers) the response when the falling (rising) pairs carry at most a tenth of the total change, and is
    /// mixed otherwise; a factor whose total index is below <see cref="NegligibleTotal"/> has none, and a categorical
    /// factor with an effect is mixed, as its level order means nothing.
    /// </summary>
    private static (EffectDirection Direction, double Slope) Direction(ValueArrays v, List<double> steps, int i, double total, double variance,
        bool categorical)
    {
        double rising = 0, falling = 0, slope = 0;
        var counted = 0;
        for (var r = 0; r < v.Count; r++)
        {
            var step = steps[r];
            if (step == 0) continue;
            var secant = (v.Mixed[i][r] - v.A[r]) / step;
            slope += secant;
            counted++;
            var change = (v.Mixed[i][r] - v.A[r]) * Math.Sign(step);
            if (change > 0) rising += change;
            else falling -= change;
        }
        slope = counted == 0 ? 0 : slope / counted;
        if (!(variance > 0) || total < NegligibleTotal || rising + falling == 0) return (EffectDirection.None, slope);
        if (categorical) return (EffectDirection.Mixed, slope);
        if (falling <= 0.1 * (rising + falling)) return (EffectDirection.Raises, slope);
        if (rising <= 0.1 * (rising + falling)) return (EffectDirection.Lowers, slope);
        return (EffectDirection.Mixed, slope);
    }
}
