// Ensembles weighted by cross-validation error (Goel, Haftka, Shyy & Queipo 2007, "Ensemble of surrogates", Struct.
// Multidisc. Optim. 33: PRESS-based weights wᵢ ∝ (Eᵢ + αĒ)^β with α = 0.05, β = −1), and log-space responses.
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling.Selection;

/// <summary>A member of an ensemble with its weight.</summary>
public sealed record EnsembleMember(ISurrogateModel Model, double Weight);

/// <summary>
/// A weighted average of surrogates. Its standard deviation mixes the members that have one with the spread of
/// the member means: √(Σ wᵢσᵢ² / Σ wᵢ + Σ wᵢ(μᵢ − μ)²), the first sum over members with uncertainty.
/// </summary>
public sealed class EnsembleModel : ISurrogateModel
{
    public const double Alpha = 0.05;
    public const double Beta = -1;

    internal EnsembleModel(IReadOnlyList<EnsembleMember> members)
    {
        Members = members;
        Space = members[0].Model.Space;
        var n = members[0].Model.CrossValidation.Predicted.Count;
        var cv = new double[n];
        foreach (var member in members)
            for (var i = 0; i < n; i++) cv[i] += member.Weight * member.Model.CrossValidation.Predicted[i];
        var loo = members.All(m => m.Model.CrossValidation.Method == CrossValidationMethod.LeaveOneOut);
        CrossValidation = new CrossValidatedPredictions(cv, loo ? CrossValidationMethod.LeaveOneOut : CrossValidationMethod.KFold,
            members.Min(m => m.Model.CrossValidation.Folds));
    }

    /// <summary>Weights from cross-validated RMSEs (Goel et al. 2007).</summary>
    public static double[] Weights(IReadOnlyList<double> cvRmse)
    {
        ArgumentNullException.ThrowIfNull(cvRmse);
        var mean = cvRmse.Average();
        var raw = cvRmse.Select(e => Math.Pow(e + Alpha * mean, Beta)).ToArray();
        if (raw.Any(w => !double.IsFinite(w))) // every error zero: equal weights
            return [.. cvRmse.Select(_ => 1.0 / cvRmse.Count)];
        var sum = raw.Sum();
        return [.. raw.Select(w => w / sum)];
    }

    public IReadOnlyList<EnsembleMember> Members { get; }

    public FactorSpace Space { get; }

    public bool HasUncertainty => Members.Any(m => m.Model.HasUncertainty);

    public string Kind => "ensemble";

    public string Description => "Ensemble of " + string.Join(", ", Members.Select(m =>
        string.Create(System.Globalization.CultureInfo.InvariantCulture, $"{Lower(m.Model.Description)} ({m.Weight:P0})")));

    public CrossValidatedPredictions CrossValidation { get; }

    public Prediction Predict(Matrix<double> codedPoints)
    {
        var predictions = Members.Select(m => m.Model.Predict(codedPoints)).ToArray();
        var count = codedPoints.RowCount;
        var mean = new double[count];
        for (var k = 0; k < Members.Count; k++)
            for (var i = 0; i < count; i++) mean[i] += Members[k].Weight * predictions[k].Mean[i];
        if (!HasUncertainty) return new Prediction(mean, null);
        var sd = new double[count];
        var uncertainWeight = Members.Where(m => m.Model.HasUncertainty).Sum(m => m.Weight);
        for (var i = 0; i < count; i++)
        {
            double within = 0, between = 0;
            for (var k = 0; k < Members.Count; k++)
            {
                var w = Members[k].Weight;
                if (predictions[k].StandardDeviation is { } s) within += w * s[i] * s[i];
                var d = predictions[k].Mean[i] - mean[i];
                between += w * d * d;
            }
            sd[i] = Math.Sqrt(within / uncertainWeight + between);
        }
        return new Prediction(mean, sd);
    }

    private static string Lower(string text) => text.Length > 0 ? char.ToLowerInvariant(text[0]) + text[1..] : text;
}

/// <summary>
/// A model fitted to ln y, seen in the response's units: the prediction is the median exp(μ) and the standard
/// deviation that of the log-normal, exp(μ)·√(exp(σ²) − 1).
/// </summary>
public sealed class LogResponseModel : ISurrogateModel
{
    internal LogResponseModel(ISurrogateModel inner)
    {
        Inner = inner;
        CrossValidation = inner.CrossValidation with { Predicted = [.. inner.CrossValidation.Predicted.Select(v => Math.Exp(v))] };
    }

    /// <summary>The model of ln y.</summary>
    public ISurrogateModel Inner { get; }

    public FactorSpace Space => Inner.Space;

    public bool HasUncertainty => Inner.HasUncertainty;

    public string Kind => Inner.Kind;

    public string Description => Inner.Description + ", fitted to the logarithm of the response";

    public CrossValidatedPredictions CrossValidation { get; }

    public Prediction Predict(Matrix<double> codedPoints)
    {
        var inner = Inner.Predict(codedPoints);
        var mean = inner.Mean.Select(v => Math.Exp(v)).ToArray();
        if (inner.StandardDeviation is not { } s) return new Prediction(mean, null);
        var sd = new double[mean.Length];
        for (var i = 0; i < mean.Length; i++) sd[i] = mean[i] * Math.Sqrt(Math.Max(Math.Exp(s[i] * s[i]) - 1, 0));
        return new Prediction(mean, sd);
    }
}

/// <summary>The surrogate of a response that did not vary: its single value everywhere.</summary>
public sealed class ConstantModel : ISurrogateModel
{
    private readonly double _value;

    internal ConstantModel(FactorSpace space, double value, int runs)
    {
        Space = space;
        _value = value;
        CrossValidation = new CrossValidatedPredictions([.. Enumerable.Repeat(value, runs)], CrossValidationMethod.LeaveOneOut, runs);
    }

    public FactorSpace Space { get; }

    public bool HasUncertainty => true;

    public string Kind => "constant";

    public string Description => "Constant (every run gave the same value)";

    public CrossValidatedPredictions CrossValidation { get; }

    public Prediction Predict(Matrix<double> codedPoints)
    {
        ArgumentNullException.ThrowIfNull(codedPoints);
        var mean = new double[codedPoints.RowCount];
        Array.Fill(mean, _value);
        return new Prediction(mean, new double[codedPoints.RowCount]);
    }
}
