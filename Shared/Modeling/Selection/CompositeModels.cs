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
public sealed class EnsembleModel : ISurrogateModel, IConditionableSurrogate
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

    public Prediction Predict(Matrix<double> codedPoints) =>
        Mix([.. Members.Select(m => m.Model.Predict(codedPoints))], [.. Members.Select(m => m.Weight)], codedPoints.RowCount);

    public double[] PredictMean(Matrix<double> codedPoints)
    {
        var mean = new double[codedPoints.RowCount];
        foreach (var member in Members)
        {
            var part = member.Model.PredictMean(codedPoints);
            for (var i = 0; i < mean.Length; i++) mean[i] += member.Weight * part[i];
        }
        return mean;
    }

    /// <summary>The ensemble with each member that can take extra runs conditioned on them (the others unchanged);
    /// null when no member can.</summary>
    public IResponseSurrogate? Condition(Matrix<double> codedPoints, IReadOnlyList<double> values)
    {
        var conditioned = new IResponseSurrogate[Members.Count];
        var any = false;
        for (var k = 0; k < Members.Count; k++)
        {
            var updated = Members[k].Model is IConditionableSurrogate c ? c.Condition(codedPoints, values) : null;
            any |= updated is not null;
            conditioned[k] = updated ?? Members[k].Model;
        }
        return any ? new WeightedSurrogates(Space, conditioned, [.. Members.Select(m => m.Weight)]) : null;
    }

    /// <summary>Weighted mean of the members and √(Σ wᵢσᵢ² / Σ wᵢ + Σ wᵢ(μᵢ − μ)²), the first sum over members
    /// with uncertainty.</summary>
    internal static Prediction Mix(Prediction[] predictions, double[] weights, int count)
    {
        var mean = new double[count];
        for (var k = 0; k < predictions.Length; k++)
            for (var i = 0; i < count; i++) mean[i] += weights[k] * predictions[k].Mean[i];
        var uncertainWeight = 0.0;
        for (var k = 0; k < predictions.Length; k++)
            if (predictions[k].StandardDeviation is not null) uncertainWeight += weights[k];
        if (uncertainWeight == 0) return new Prediction(mean, null);
        var sd = new double[count];
        for (var i = 0; i < count; i++)
        {
            double within = 0, between = 0;
            for (var k = 0; k < predictions.Length; k++)
            {
                var w = weights[k];
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

/// <summary>An ensemble whose members were conditioned on extra runs: the same weights and mixing.</summary>
internal sealed class WeightedSurrogates(FactorSpace space, IResponseSurrogate[] members, double[] weights) : IConditionableSurrogate
{
    public FactorSpace Space { get; } = space;

    public bool HasUncertainty => members.Any(m => m.HasUncertainty);

    public Prediction Predict(Matrix<double> codedPoints) =>
        EnsembleModel.Mix([.. members.Select(m => m.Predict(codedPoints))], weights, codedPoints.RowCount);

    public double[] PredictMean(Matrix<double> codedPoints)
    {
        var mean = new double[codedPoints.RowCount];
        for (var k = 0; k < members.Length; k++)
        {
            var part = members[k].PredictMean(codedPoints);
            for (var i = 0; i < mean.Length; i++) mean[i] += weights[k] * part[i];
        }
        return mean;
    }

    public IResponseSurrogate? Condition(Matrix<double> codedPoints, IReadOnlyList<double> values) =>
        new WeightedSurrogates(Space,
            [.. members.Select(m => (m is IConditionableSurrogate c ? c.Condition(codedPoints, values) : null) ?? m)], weights);
}

/// <summary>
/// A model fitted to ln y, seen in the response's units: the prediction is the median exp(μ) and the standard
/// deviation that of the log-normal, exp(μ)·√(exp(σ²) − 1).
/// </summary>
public sealed class LogResponseModel : ISurrogateModel, IConditionableSurrogate
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

    public Prediction Predict(Matrix<double> codedPoints) => FromLog(Inner.Predict(codedPoints));

    public double[] PredictMean(Matrix<double> codedPoints) => [.. Inner.PredictMean(codedPoints).Select(v => Math.Exp(v))];

    /// <summary>The inner model conditioned on ln of the values; null when a value is not positive or the inner
    /// model cannot take extra runs.</summary>
    public IResponseSurrogate? Condition(Matrix<double> codedPoints, IReadOnlyList<double> values)
    {
        ArgumentNullException.ThrowIfNull(values);
        if (Inner is not IConditionableSurrogate inner || values.Any(v => !(v > 0))) return null;
        return inner.Condition(codedPoints, [.. values.Select(v => Math.Log(v))]) is { } conditioned ? new LogView(conditioned) : null;
    }

    internal static Prediction FromLog(Prediction inner)
    {
        var mean = inner.Mean.Select(v => Math.Exp(v)).ToArray();
        if (inner.StandardDeviation is not { } s) return new Prediction(mean, null);
        var sd = new double[mean.Length];
        for (var i = 0; i < mean.Length; i++) sd[i] = mean[i] * Math.Sqrt(Math.Max(Math.Exp(s[i] * s[i]) - 1, 0));
        return new Prediction(mean, sd);
    }

    /// <summary>A conditioned model of ln y seen in the response's units.</summary>
    private sealed class LogView(IResponseSurrogate inner) : IConditionableSurrogate
    {
        public FactorSpace Space => inner.Space;

        public bool HasUncertainty => inner.HasUncertainty;

        public Prediction Predict(Matrix<double> codedPoints) => FromLog(inner.Predict(codedPoints));

        public double[] PredictMean(Matrix<double> codedPoints) => [.. inner.PredictMean(codedPoints).Select(v => Math.Exp(v))];

        public IResponseSurrogate? Condition(Matrix<double> codedPoints, IReadOnlyList<double> values) =>
            inner is IConditionableSurrogate c && values.All(v => v > 0) && c.Condition(codedPoints, [.. values.Select(v => Math.Log(v))]) is { } next
                ? new LogView(next)
                : null;
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
