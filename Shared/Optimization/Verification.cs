namespace Runfold.Shared.Optimization;

/// <summary>A verification run's observed value against the surrogate's prediction for one response.</summary>
public sealed record VerificationComparison(double Predicted, double Observed, double Error, double CvRmse, double Allowed, bool WithinCvError);

public static class Verification
{
    /// <summary>
    /// Compares an observed value with its prediction: the error is observed − predicted, and it lies within the
    /// model's cross-validated error when |error| ≤ <paramref name="coverage"/>·cvRMSE. The default 2 holds about
    /// 95 % of errors when they are roughly normal (common practice); 1 asks whether the error is within one RMSE.
    /// </summary>
    public static VerificationComparison Compare(double predictedMean, double observed, double cvRmse, double coverage = 2)
    {
        if (!double.IsFinite(predictedMean) || !double.IsFinite(observed))
            throw new ArgumentException("The prediction and the observed value must be finite numbers.", nameof(observed));
        if (!(cvRmse >= 0)) throw new ArgumentException("The cross-validated RMSE must be zero or positive.", nameof(cvRmse));
        if (!(coverage > 0)) throw new ArgumentException("The coverage must be positive.", nameof(coverage));
        var error = observed - predictedMean;
        var allowed = coverage * cvRmse;
        return new VerificationComparison(predictedMean, observed, error, cvRmse, allowed, Math.Abs(error) <= allowed);
    }
}
