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
