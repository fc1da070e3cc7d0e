using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling;

/// <summary>
/// A fitted surrogate of one response, seen from the factor space: the contract between the models (Modeling/)
/// and everything that uses them (Sensitivity/, Optimization/, the analysis worker).
/// <para>
/// Points are rows of coded factor values in factor order (−1…+1 spans each range; a categorical factor's coded
/// value is the position of its level, as <see cref="Factor.ToCoded"/> gives it; integer factors at whole values).
/// The surrogate encodes them for its model (one-hot for categorical factors) and undoes any transform of the
/// response, so predictions are in the response's own units.
/// </para>
/// </summary>
public interface IResponseSurrogate
{
    FactorSpace Space { get; }

    /// <summary>True when <see cref="Prediction.StandardDeviation"/> is filled (Gaussian process, least squares).</summary>
    bool HasUncertainty { get; }

    /// <summary>Predicts every row of <paramref name="codedPoints"/> (n × factor count) at once.</summary>
    Prediction Predict(Matrix<double> codedPoints);

    /// <summary>The predicted means only. Sensitivity and optimisation call this in their hot loops; models whose
    /// standard deviation costs much more than their mean (the Gaussian process) answer it on a faster path.</summary>
    double[] PredictMean(Matrix<double> codedPoints) => Predict(codedPoints).Mean;
}

/// <summary>
/// A surrogate that can take extra runs at fixed hyper-parameters, as the batch heuristics of expected improvement
/// need (kriging believer and constant liar, Ginsbourger, Le Riche &amp; Carraro 2010): the fantasised values are added
/// to the data and the model is solved again without re-estimating anything.
/// </summary>
public interface IConditionableSurrogate : IResponseSurrogate
{
    /// <summary>The same model with <paramref name="codedPoints"/> and their <paramref name="values"/> (response
    /// units) added to its runs; null when this model cannot take them (for example when its part that carries the
    /// uncertainty is not a Gaussian process, or the new covariance cannot be factorised).</summary>
    IResponseSurrogate? Condition(Matrix<double> codedPoints, IReadOnlyList<double> values);
}

/// <summary>Predicted mean per point and, when the model has one, the standard deviation of the prediction.</summary>
public sealed class Prediction
{
    public Prediction(double[] mean, double[]? standardDeviation)
    {
        ArgumentNullException.ThrowIfNull(mean);
        if (standardDeviation is not null && standardDeviation.Length != mean.Length)
            throw new ArgumentException("Mean and standard deviation need one value per point each.", nameof(standardDeviation));
        Mean = mean;
        StandardDeviation = standardDeviation;
    }

    public double[] Mean { get; }

    /// <summary>Null when the model gives no uncertainty.</summary>
    public double[]? StandardDeviation { get; }

    public int Count => Mean.Length;
}
