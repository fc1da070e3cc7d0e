// Gaussian-process regression (kriging) with hyper-parameters by maximum likelihood (Rasmussen & Williams 2006, ch. 2
// and 5; Jones, Schonlau & Welch 1998) and closed-form leave-one-out residuals (Dubrule 1983, Math. Geology 15(6)).
using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling.GaussianProcess;

/// <summary>Fits Gaussian processes to the runs of one response.</summary>
public static class GaussianProcessModel
{
    /// <summary>The largest nugget tried when the covariance will not factorise (ill-conditioned designs).</summary>
    private const double LargestNugget = 1e-4;

    /// <summary>
    /// Fits by maximum likelihood: the first start has every length scale at 1 (coded units), or is
    /// <see cref="GaussianProcessOptions.InitialLengthScales"/> followed by that one when restarts are asked for; the
    /// <see cref="GaussianProcessOptions.Restarts"/> further starts come from a seeded Latin hypercube over log
    /// length scales in [0.1, 20]; each runs the bounded quasi-Newton search with the analytic gradient, and the
    /// best end point wins.
    /// </summary>
    public static GaussianProcessSurrogate Fit(
        FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed,
        GaussianProcessOptions? options = null, CancellationToken cancellation = default)
    {
        options ??= GaussianProcessOptions.Default;
        options.Check();
        var problem = Problem.Create(space, coded, observed, options);
        if (problem.Standardization.IsConstant) return problem.Constant();

        var m = problem.Likelihood.Columns;
        var dimension = m + (options.Noisy ? 1 : 0);
        var lower = new double[dimension];
        var upper = new double[dimension];
        for (var k = 0; k < m; k++)
        {
            lower[k] = Math.Log(options.LengthScaleLower);
            upper[k] = Math.Log(options.LengthScaleUpper);
        }
        if (options.Noisy)
        {
            lower[m] = Math.Log(options.NoiseRatioLower);
            upper[m] = Math.Log(options.NoiseRatioUpper);
        }

        if (options.InitialLengthScales is { } initial && initial.Count != m)
            throw new ArgumentException($"The model has {m} input columns but {initial.Count} initial length scales were given.", nameof(options));
        var starts = Starts(m, options, lower, upper);
        var nugget = Math.Max(options.Nugget, 0);
        var settings = new QuasiNewtonSettings(MaxIterations: options.MaxIterations);
        while (true)
        {
            var best = new QuasiNewtonResult([], double.PositiveInfinity, 0, 0);
            var fixedNugget = nugget;
            foreach (var start in starts)
            {
                cancellation.ThrowIfCancellationRequested();
                var result = BoundedQuasiNewton.Minimize(
                    (theta, gradient) => problem.Likelihood.NegativeLogLikelihood(theta, gradient, fixedNugget, options.Noisy, options.Restricted),
                    start, lower, upper, settings, cancellation);
                if (result.Value < best.Value) best = result;
            }
            if (double.IsFinite(best.Value))
            {
                var scales = best.Point[..m].Select(Math.Exp).ToArray();
                var ratio = options.Noisy ? Math.Exp(best.Point[m]) : nugget;
                var solution = problem.Likelihood.Solve(scales, ratio, signalVariance: null);
                if (solution is not null) return problem.Surrogate(solution, options, estimated: true);
            }
            if (options.Noisy || nugget >= LargestNugget)
                throw new InvalidOperationException("The covariance of these runs could not be factorised even with the largest nugget; the runs may be nearly all identical.");
            nugget = nugget <= 0 ? 1e-10 : nugget * 100;
        }
    }

    /// <summary>Fits with hyper-parameters fixed (in standardised units), e.g. to compare with another library.</summary>
    public static GaussianProcessSurrogate FitWith(
        FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed,
        GaussianProcessOptions options, GaussianProcessHyperparameters hyperparameters)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(hyperparameters);
        options.Check();
        var problem = Problem.Create(space, coded, observed, options);
        if (problem.Standardization.IsConstant) return problem.Constant();
        if (hyperparameters.LengthScales.Count != problem.Likelihood.Columns)
            throw new ArgumentException($"The model has {problem.Likelihood.Columns} input columns but {hyperparameters.LengthScales.Count} length scales were given.", nameof(hyperparameters));
        if (!(hyperparameters.SignalVariance > 0) || !(hyperparameters.NoiseVariance >= 0) || hyperparameters.LengthScales.Any(l => !(l > 0)))
            throw new ArgumentException("Length scales and the signal variance must be positive, the noise variance zero or positive.", nameof(hyperparameters));
        var solution = problem.Likelihood.Solve(hyperparameters.LengthScales, hyperparameters.NoiseVariance / hyperparameters.SignalVariance, hyperparameters.SignalVariance)
            ?? throw new InvalidOperationException("The covariance with these hyper-parameters is not positive definite; raise the noise variance.");
        return problem.Surrogate(solution, options, estimated: false);
    }

    /// <summary>Fits with the length scales and the noise-to-signal ratio fixed and the signal variance estimated
    /// in closed form (its maximum-likelihood value given the others): a chosen process refitted to changed runs.</summary>
    public static GaussianProcessSurrogate FitWith(
        FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed,
        GaussianProcessOptions options, IReadOnlyList<double> lengthScales, double noiseRatio)
    {
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(lengthScales);
        options.Check();
        var problem = Problem.Create(space, coded, observed, options);
        if (problem.Standardization.IsConstant) return problem.Constant();
        if (lengthScales.Count != problem.Likelihood.Columns)
            throw new ArgumentException($"The model has {problem.Likelihood.Columns} input columns but {lengthScales.Count} length scales were given.", nameof(lengthScales));
        if (!(noiseRatio >= 0) || lengthScales.Any(l => !(l > 0)))
            throw new ArgumentException("Length scales must be positive and the noise ratio zero or positive.", nameof(lengthScales));
        var solution = problem.Likelihood.Solve(lengthScales, noiseRatio, signalVariance: null)
            ?? throw new InvalidOperationException("The covariance of these runs with these length scales could not be factorised.");
        return problem.Surrogate(solution, options, estimated: false);
    }

    private static List<double[]> Starts(int m, GaussianProcessOptions options, double[] lower, double[] upper)
    {
        var starts = new List<double[]>();
        var ones = new double[lower.Length];
        if (options.Noisy) ones[m] = Math.Log(1e-2);
        if (options.InitialLengthScales is { } initial)
        {
            var warm = (double[])ones.Clone();
            for (var k = 0; k < m; k++) warm[k] = Math.Clamp(Math.Log(initial[k]), lower[k], upper[k]);
            starts.Add(warm);
        }
        // With a warm start and restarts asked for, the usual first start stays among them, so a warm start that sits
        // in a poor optimum of the likelihood can still be left.
        if (options.InitialLengthScales is null || options.Restarts > 0) starts.Add(ones);
        if (options.Restarts == 0) return starts;
        var random = new Random(options.Seed);
        var dimension = lower.Length;
        var columns = new int[dimension][];
        for (var k = 0; k < dimension; k++)
        {
            columns[k] = [.. Enumerable.Range(0, options.Restarts)];
            for (var i = options.Restarts - 1; i > 0; i--)
            {
                var j = random.Next(i + 1);
                (columns[k][i], columns[k][j]) = (columns[k][j], columns[k][i]);
            }
        }
        for (var r = 0; r < options.Restarts; r++)
        {
            var start = new double[dimension];
            for (var k = 0; k < dimension; k++)
            {
                var (from, to) = k < m ? (Math.Log(0.1), Math.Log(20)) : (Math.Log(1e-6), Math.Log(0.3));
                var u = (columns[k][r] + random.NextDouble()) / options.Restarts;
                start[k] = Math.Clamp(from + u * (to - from), lower[k], upper[k]);
            }
            starts.Add(start);
        }
        return starts;
    }

    /// <summary>
    /// The same process with extra runs: hyper-parameters, trend form and the response's standardisation are kept,
    /// only the covariance is factorised again (kriging believer and constant liar need exactly this). If the new
    /// runs sit on old ones the nugget is raised step by step up to 1e-6; null when even that fails.
    /// </summary>
    internal static GaussianProcessSurrogate? WithRuns(GaussianProcessSurrogate fitted, Matrix<double> coded, IReadOnlyList<double> observed)
    {
        var problem = Problem.Create(fitted.Space, coded, observed, fitted.Options, fitted.Standardization);
        if (fitted.Solution is not { } old) return problem.Constant();
        var nugget = old.NoiseRatio;
        while (true)
        {
            var solution = problem.Likelihood.Solve(old.LengthScales, nugget, old.SignalVariance);
            if (solution is not null) return problem.Surrogate(solution, fitted.Options, fitted.HyperparametersEstimated);
            if (nugget >= 1e-6) return null;
            nugget = Math.Max(nugget * 100, 1e-10);
        }
    }

    /// <summary>The encoded training data of one fit.</summary>
    private sealed class Problem
    {
        private Problem(FactorSpace space, FactorEncoding encoding, TrendBasis trend, Standardization standardization,
            Matrix<double> coded, IReadOnlyList<double> observed, GaussianProcessLikelihood likelihood)
        {
            Space = space;
            Encoding = encoding;
            Trend = trend;
            Standardization = standardization;
            Coded = coded;
            Observed = observed;
            Likelihood = likelihood;
        }

        public FactorSpace Space { get; }
        public FactorEncoding Encoding { get; }
        public TrendBasis Trend { get; }
        public Standardization Standardization { get; }
        public Matrix<double> Coded { get; }
        public IReadOnlyList<double> Observed { get; }
        public GaussianProcessLikelihood Likelihood { get; }

        public static Problem Create(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed, GaussianProcessOptions options,
            Standardization? standardization = null)
        {
            TrainingData.Check(space, coded, observed);
            if (coded.RowCount < 2) throw new ArgumentException("A Gaussian process needs at least two runs.", nameof(coded));
            var encoding = new FactorEncoding(space, dropFirstLevel: false);
            var trend = new TrendBasis(space, options.Trend switch
            {
                GaussianProcessTrend.None => -1,
                GaussianProcessTrend.Constant => 0,
                _ => 1,
            });
            if (trend.Count >= coded.RowCount)
                throw new ArgumentException($"A {options.Trend.ToString().ToLowerInvariant()} trend has {trend.Count} coefficients and needs more than {trend.Count} runs; there are {coded.RowCount}.", nameof(coded));
            var scaling = standardization ?? Standardization.Of(observed);
            var y = observed.Select(scaling.Apply).ToArray();
            var likelihood = new GaussianProcessLikelihood(encoding.Encode(coded), encoding.ColumnCount, y, trend.Evaluate(coded), trend.Count, options.Kernel);
            return new Problem(space, encoding, trend, scaling, coded.Clone(), [.. observed], likelihood);
        }

        public GaussianProcessSurrogate Constant() => new(Space, Encoding, Trend, Standardization, null, GaussianProcessOptions.Default, Coded, Observed, false);

        public GaussianProcessSurrogate Surrogate(GaussianProcessSolution solution, GaussianProcessOptions options, bool estimated) =>
            new(Space, Encoding, Trend, Standardization, solution, options, Coded, Observed, estimated);
    }
}

/// <summary>
/// A fitted Gaussian process. Predictions are the posterior mean and the standard deviation of the latent
/// response (the estimated noise of a noisy response is not added), in the response's units.
/// </summary>
public sealed class GaussianProcessSurrogate : ISurrogateModel, IConditionableSurrogate
{
    private const int Chunk = 128;

    private readonly FactorEncoding _encoding;
    private readonly TrendBasis _trend;
    private readonly GaussianProcessSolution? _solution;
    private readonly double _constant;
    private readonly Matrix<double> _runs;
    private readonly IReadOnlyList<double> _observed;
    private readonly MeanKernel? _meanKernel;

    internal GaussianProcessSurrogate(FactorSpace space, FactorEncoding encoding, TrendBasis trend, Standardization standardization,
        GaussianProcessSolution? solution, GaussianProcessOptions options, Matrix<double> runs, IReadOnlyList<double> observed, bool estimated)
    {
        Space = space;
        _encoding = encoding;
        _trend = trend;
        _solution = solution;
        _runs = runs;
        _observed = observed;
        Standardization = standardization;
        Options = options;
        HyperparametersEstimated = estimated;
        if (solution is not null) _meanKernel = new MeanKernel(solution);
        var n = observed.Count;
        if (solution is null)
        {
            _constant = standardization.Mean;
            Hyperparameters = new GaussianProcessHyperparameters([.. Enumerable.Repeat(1.0, encoding.ColumnCount)], 0, 0);
            LogMarginalLikelihood = double.NaN;
            LeaveOneOutStandardDeviation = new double[n];
            CrossValidation = new CrossValidatedPredictions([.. Enumerable.Repeat(_constant, n)], CrossValidationMethod.LeaveOneOut, n);
            return;
        }
        Hyperparameters = new GaussianProcessHyperparameters(solution.LengthScales, solution.SignalVariance, solution.NoiseRatio * solution.SignalVariance);
        LogMarginalLikelihood = solution.LogLikelihood;
        var loo = new double[n];
        var looSd = new double[n];
        for (var i = 0; i < n; i++)
        {
            var precision = solution.LeaveOneOutPrecision[i];
            loo[i] = observed[i] - standardization.Scale * solution.Alpha[i] / precision;
            looSd[i] = standardization.Scale * Math.Sqrt(Math.Max(solution.SignalVariance / precision, 0));
        }
        CrossValidation = new CrossValidatedPredictions(loo, CrossValidationMethod.LeaveOneOut, n);
        LeaveOneOutStandardDeviation = looSd;
    }

    public FactorSpace Space { get; }

    public bool HasUncertainty => true;

    public string Kind => "gaussianProcess";

    public string Description => _solution is null
        ? "Gaussian process (the response is constant)"
        : $"Gaussian process, {KernelName(Options.Kernel)} kernel, {Options.Trend.ToString().ToLowerInvariant()} trend{(Options.Noisy ? ", estimated noise" : "")}";

    public GaussianProcessOptions Options { get; }

    /// <summary>Length scales per encoded column (coded units); variances in standardised response units.</summary>
    public GaussianProcessHyperparameters Hyperparameters { get; }

    /// <summary>True when found by maximum likelihood, false when given.</summary>
    public bool HyperparametersEstimated { get; }

    /// <summary>Log marginal likelihood of the standardised response at the hyper-parameters.</summary>
    public double LogMarginalLikelihood { get; }

    public Standardization Standardization { get; }

    /// <summary>Names of the encoded columns the length scales belong to.</summary>
    public IReadOnlyList<string> ColumnNames => _encoding.ColumnNames;

    public CrossValidatedPredictions CrossValidation { get; }

    /// <summary>Standard deviation of each leave-one-out prediction (response units).</summary>
    public IReadOnlyList<double> LeaveOneOutStandardDeviation { get; }

    internal GaussianProcessSolution? Solution => _solution;

    /// <summary>The process refitted at the same hyper-parameters with the extra runs added (kriging believer,
    /// constant liar); null when the covariance cannot be factorised.</summary>
    public IResponseSurrogate? Condition(Matrix<double> codedPoints, IReadOnlyList<double> values)
    {
        ArgumentNullException.ThrowIfNull(codedPoints);
        ArgumentNullException.ThrowIfNull(values);
        if (codedPoints.RowCount != values.Count)
            throw new ArgumentException($"There are {codedPoints.RowCount} points but {values.Count} values.", nameof(values));
        if (codedPoints.RowCount == 0) return this;
        return GaussianProcessModel.WithRuns(this, _runs.Stack(codedPoints), [.. _observed, .. values]);
    }

    public static string KernelName(CovarianceKernel kernel) => kernel switch
    {
        CovarianceKernel.SquaredExponential => "squared-exponential",
        CovarianceKernel.Matern32 => "Matérn 3/2",
        _ => "Matérn 5/2",
    };

    public Prediction Predict(Matrix<double> codedPoints)
    {
        ArgumentNullException.ThrowIfNull(codedPoints);
        if (codedPoints.ColumnCount != Space.Count)
            throw new ArgumentException($"The points have {codedPoints.ColumnCount} columns for {Space.Count} factors.", nameof(codedPoints));
        var count = codedPoints.RowCount;
        var mean = new double[count];
        var sd = new double[count];
        if (_solution is not { } s)
        {
            Array.Fill(mean, _constant);
            return new Prediction(mean, sd);
        }

        var n = s.Count;
        var m = s.Columns;
        var p = _trend.Count;
        var features = new double[Chunk * m];
        var cross = new double[Chunk * n];
        var projected = new double[Chunk * n];
        var trendRows = new double[Chunk * Math.Max(p, 1)];
        var trendScratch = new double[_trend.ScratchLength(Chunk)];
        var u = new double[p];
        var scales = s.LengthScales;
        for (var start = 0; start < count; start += Chunk)
        {
            var rows = Math.Min(Chunk, count - start);
            _encoding.Encode(codedPoints, start, rows, features);
            _trend.Evaluate(codedPoints, start, rows, trendRows, trendScratch);
            FillCross(s, features, rows, scales, cross);

            // T = K*·L⁻ᵀ, strip by strip: column r of L⁻ᵀ has entries in rows ≤ r only.
            Array.Clear(projected, 0, rows * n);
            for (var r0 = 0; r0 < n; r0 += 8)
                DenseKernels.MultiplyAdd(cross, 0, n, 1, s.UpperInverseFactor, r0, n, projected, r0, n,
                    rows, Math.Min(8, n - r0), Math.Min(n, r0 + 8), subtract: false);

            for (var r = 0; r < rows; r++)
            {
                var value = DenseKernels.Dot(cross, r * n, s.Alpha, 0, n);
                for (var t = 0; t < p; t++) value += trendRows[r * p + t] * s.Beta[t];
                var explained = DenseKernels.Dot(projected, r * n, projected, r * n, n);
                var trendPart = 0.0;
                if (p > 0)
                {
                    for (var t = 0; t < p; t++)
                    {
                        var sum = 0.0;
                        for (var i = 0; i < n; i++) sum += s.InverseTimesTrend[i * p + t] * cross[r * n + i];
                        u[t] = sum - trendRows[r * p + t];
                    }
                    for (var a = 0; a < p; a++)
                        for (var b = 0; b < p; b++) trendPart += u[a] * s.NormalInverse[a * p + b] * u[b];
                }
                var variance = s.SignalVariance * Math.Max(1 - explained + trendPart, 0);
                mean[start + r] = Standardization.Undo(value);
                sd[start + r] = Standardization.Scale * Math.Sqrt(variance);
            }
        }
        return new Prediction(mean, sd);
    }

    /// <summary>The posterior mean without the variance: Σᵢ r(x, xᵢ)αᵢ plus the trend, vectorised over the runs and
    /// spread over threads by blocks of points (each point is summed in one fixed order, so results do not depend on
    /// the thread count).</summary>
    public double[] PredictMean(Matrix<double> codedPoints)
    {
        ArgumentNullException.ThrowIfNull(codedPoints);
        if (codedPoints.ColumnCount != Space.Count)
            throw new ArgumentException($"The points have {codedPoints.ColumnCount} columns for {Space.Count} factors.", nameof(codedPoints));
        var count = codedPoints.RowCount;
        var mean = new double[count];
        if (_solution is not { } s || _meanKernel is not { } kernel)
        {
            Array.Fill(mean, _constant);
            return mean;
        }
        var blocks = (count + MeanKernel.Block - 1) / MeanKernel.Block;
        void Run(int block)
        {
            var start = block * MeanKernel.Block;
            var rows = Math.Min(MeanKernel.Block, count - start);
            var features = new double[rows * s.Columns];
            var trendRows = new double[rows * Math.Max(_trend.Count, 1)];
            var scratch = new double[_trend.ScratchLength(rows)];
            _encoding.Encode(codedPoints, start, rows, features);
            _trend.Evaluate(codedPoints, start, rows, trendRows, scratch);
            for (var r = 0; r < rows; r++)
            {
                var value = kernel.Sum(features.AsSpan(r * s.Columns, s.Columns));
                for (var t = 0; t < _trend.Count; t++) value += trendRows[r * _trend.Count + t] * s.Beta[t];
                mean[start + r] = Standardization.Undo(value);
            }
        }
        if (blocks > 1 && (long)count * s.Count >= MeanKernel.ParallelWork) Parallel.For(0, blocks, Run);
        else for (var b = 0; b < blocks; b++) Run(b);
        return mean;
    }

    private static void FillCross(GaussianProcessSolution s, double[] features, int rows, double[] scales, double[] cross)
    {
        var n = s.Count;
        var m = s.Columns;
        var z = s.ScaledFeatures;
        Span<double> point = stackalloc double[m];
        for (var r = 0; r < rows; r++)
        {
            for (var k = 0; k < m; k++) point[k] = features[r * m + k] / scales[k];
            for (var i = 0; i < n; i++)
            {
                var d2 = 0.0;
                for (var k = 0; k < m; k++)
                {
                    var h = point[k] - z[i * m + k];
                    d2 += h * h;
                }
                cross[r * n + i] = GaussianProcessLikelihood.Correlation(s.Kernel, d2);
            }
        }
    }
}

/// <summary>
/// Σᵢ r(‖x/ℓ − zᵢ‖²)·αᵢ with the runs' scaled features stored by column (padded to whole 256-bit vectors, padding
/// weighted zero), so four runs are handled per step with vector square roots and exponentials.
/// </summary>
internal sealed class MeanKernel
{
    public const int Block = 256;
    public const long ParallelWork = 1 << 19;

    private readonly double[] _columns; // m × padded, column k holds zₖ of every run
    private readonly double[] _alpha;   // padded with zeros
    private readonly double[] _inverseScales;
    private readonly int _padded, _m;
    private readonly CovarianceKernel _kernel;

    public MeanKernel(GaussianProcessSolution solution)
    {
        var n = solution.Count;
        _m = solution.Columns;
        _kernel = solution.Kernel;
        _padded = (n + 3) / 4 * 4;
        _columns = new double[_m * _padded];
        for (var i = 0; i < n; i++)
            for (var k = 0; k < _m; k++) _columns[k * _padded + i] = solution.ScaledFeatures[i * _m + k];
        _alpha = new double[_padded];
        Array.Copy(solution.Alpha, _alpha, n);
        _inverseScales = [.. solution.LengthScales.Select(l => 1 / l)];
    }

    /// <summary>The kernel part of the mean at one encoded point (standardised units).</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public double Sum(ReadOnlySpan<double> features)
    {
        Span<double> point = stackalloc double[_m];
        for (var k = 0; k < _m; k++) point[k] = features[k] * _inverseScales[k];
        ref var columns = ref MemoryMarshal.GetArrayDataReference(_columns);
        ref var alpha = ref MemoryMarshal.GetArrayDataReference(_alpha);
        var sum = Vector256<double>.Zero;
        for (var i = 0; i < _padded; i += 4)
        {
            var d2 = Vector256<double>.Zero;
            for (var k = 0; k < _m; k++)
            {
                var h = Vector256.Create(point[k])
                        - Vector256.LoadUnsafe(ref columns, (nuint)(k * _padded + i));
                d2 = Vector256.FusedMultiplyAdd(h, h, d2);
            }
            var weights = Vector256.LoadUnsafe(ref alpha, (nuint)i);
            sum = Vector256.FusedMultiplyAdd(Correlation(_kernel, d2), weights, sum);
        }
        return Vector256.Sum(sum);
    }

    private static Vector256<double> Correlation(CovarianceKernel kernel, Vector256<double> d2)
    {
        var one = Vector256.Create(1.0);
        switch (kernel)
        {
            case CovarianceKernel.SquaredExponential:
                return Vector256.Exp(d2 * -0.5);
            case CovarianceKernel.Matern32:
            {
                var d = Vector256.Sqrt(d2 * 3.0);
                return (one + d) * Vector256.Exp(-d);
            }
            default:
            {
                var d = Vector256.Sqrt(d2 * 5.0);
                return (one + d + d * d * (1.0 / 3)) * Vector256.Exp(-d);
            }
        }
    }
}
