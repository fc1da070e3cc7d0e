namespace Runfold.Shared.Modeling;

/// <summary>
/// The fit check of one response from cross-validated predictions: each training run predicted by a model that
/// did not see it. NRMSE is the cross-validated RMSE over the observed range (max − min).
/// </summary>
public sealed record FitCheck(
    double CvR2,
    double CvRmse,
    double Nrmse,
    double MaxAbsError,
    IReadOnlyList<double> Observed,
    IReadOnlyList<double> Predicted,
    IReadOnlyList<double> Residuals,
    string Method)
{
    /// <summary>The fit check of predictions against observations; a constant response has R² 1 and no error.</summary>
    public static FitCheck From(IReadOnlyList<double> observed, IReadOnlyList<double> predicted, string method)
    {
        ArgumentNullException.ThrowIfNull(observed);
        ArgumentNullException.ThrowIfNull(predicted);
        var n = observed.Count;
        var mean = observed.Average();
        double press = 0, total = 0, largest = 0;
        var residuals = new double[n];
        for (var i = 0; i < n; i++)
        {
            residuals[i] = observed[i] - predicted[i];
            press += residuals[i] * residuals[i];
            total += (observed[i] - mean) * (observed[i] - mean);
            largest = Math.Max(largest, Math.Abs(residuals[i]));
        }
        var rmse = Math.Sqrt(press / n);
        var range = observed.Max() - observed.Min();
        return new FitCheck(
            total > 0 ? 1 - press / total : press == 0 ? 1 : double.NegativeInfinity,
            rmse,
            range > 0 ? rmse / range : rmse == 0 ? 0 : double.PositiveInfinity,
            largest,
            [.. observed],
            [.. predicted],
            residuals,
            method);
    }
}
