namespace Runfold.Shared.Modeling.GaussianProcess;

/// <summary>Stationary anisotropic correlation functions (Rasmussen & Williams 2006, §4.2; Matérn ν = 3/2, 5/2).</summary>
public enum CovarianceKernel
{
    /// <summary>exp(−½ Σ (hₖ/ℓₖ)²).</summary>
    SquaredExponential,

    /// <summary>(1 + √3 d) exp(−√3 d), d² = Σ (hₖ/ℓₖ)².</summary>
    Matern32,

    /// <summary>(1 + √5 d + 5d²/3) exp(−√5 d).</summary>
    Matern52,
}

/// <summary>The mean function of the process.</summary>
public enum GaussianProcessTrend
{
    /// <summary>Zero mean of the standardised response, i.e. the sample mean (scikit-learn's normalize_y=True).</summary>
    None,

    /// <summary>A constant estimated by generalised least squares (ordinary kriging).</summary>
    Constant,

    /// <summary>A linear function of the factors estimated by generalised least squares (universal kriging).</summary>
    Linear,
}

/// <summary>
/// How a Gaussian process is fitted. Inputs are the coded factors (−1…+1; indicator columns for categorical
/// levels); the response is standardised. Length scales are in coded units.
/// </summary>
public sealed record GaussianProcessOptions
{
    public CovarianceKernel Kernel { get; init; } = CovarianceKernel.Matern52;

    public GaussianProcessTrend Trend { get; init; } = GaussianProcessTrend.Constant;

    /// <summary>True when repeated runs would scatter: the noise variance is then estimated by maximum
    /// likelihood. False (computer experiments): only <see cref="Nugget"/> is added, for conditioning.</summary>
    public bool Noisy { get; init; }

    /// <summary>Random starts of the likelihood search after the first one (scikit-learn's n_restarts_optimizer).</summary>
    public int Restarts { get; init; } = 5;

    public int Seed { get; init; } = 1;

    /// <summary>Where the first likelihood search starts: one length scale per encoded column (coded units), for
    /// example those of the previous fit when a few runs were added (a warm start). With no restarts it is the only
    /// start; with restarts the usual start (every length scale 1) and the random ones follow. Null: every length
    /// scale 1.</summary>
    public IReadOnlyList<double>? InitialLengthScales { get; init; }

    /// <summary>Noise variance over signal variance for deterministic responses.</summary>
    public double Nugget { get; init; } = 1e-12;

    public double LengthScaleLower { get; init; } = 0.01;

    public double LengthScaleUpper { get; init; } = 100;

    /// <summary>Bounds of the estimated noise variance over signal variance when <see cref="Noisy"/>.</summary>
    public double NoiseRatioLower { get; init; } = 1e-8;

    public double NoiseRatioUpper { get; init; } = 1;

    public int MaxIterations { get; init; } = 200;

    /// <summary>Restricted maximum likelihood (Patterson & Thompson 1971): the trend's degrees of freedom are
    /// taken out of the likelihood before the hyper-parameters are estimated.</summary>
    public bool Restricted { get; init; }

    public static GaussianProcessOptions Default { get; } = new();

    internal void Check()
    {
        if (Restarts < 0) throw new ArgumentException("The number of restarts cannot be negative.", nameof(Restarts));
        if (!(Nugget >= 0)) throw new ArgumentException("The nugget must be zero or positive.", nameof(Nugget));
        if (!(LengthScaleLower > 0 && LengthScaleUpper > LengthScaleLower))
            throw new ArgumentException("The length-scale bounds must be positive and increasing.", nameof(LengthScaleLower));
        if (!(NoiseRatioLower > 0 && NoiseRatioUpper > NoiseRatioLower))
            throw new ArgumentException("The noise bounds must be positive and increasing.", nameof(NoiseRatioLower));
        if (MaxIterations < 1) throw new ArgumentException("At least one iteration is needed.", nameof(MaxIterations));
        if (InitialLengthScales is { } start && start.Any(l => !(l > 0) || !double.IsFinite(l)))
            throw new ArgumentException("Initial length scales must be positive numbers.", nameof(InitialLengthScales));
    }
}

/// <summary>
/// Hyper-parameters in the standardised response's units: the covariance is
/// SignalVariance·r(x, x′) + NoiseVariance·δ(x, x′), with length scales per encoded column in coded units.
/// </summary>
public sealed record GaussianProcessHyperparameters(IReadOnlyList<double> LengthScales, double SignalVariance, double NoiseVariance);
