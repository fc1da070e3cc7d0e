using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling;

/// <summary>Checks of the inputs every estimator shares, with sentences that name the problem.</summary>
internal static class TrainingData
{
    public static void Check(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed)
    {
        ArgumentNullException.ThrowIfNull(space);
        ArgumentNullException.ThrowIfNull(coded);
        ArgumentNullException.ThrowIfNull(observed);
        if (coded.ColumnCount != space.Count)
            throw new ArgumentException($"The runs have {coded.ColumnCount} columns but the study has {space.Count} factors.", nameof(coded));
        if (coded.RowCount != observed.Count)
            throw new ArgumentException($"There are {coded.RowCount} runs but {observed.Count} observed values.", nameof(observed));
        for (var i = 0; i < coded.RowCount; i++)
        {
            if (!double.IsFinite(observed[i]))
                throw new ArgumentException($"The observed value of run {i + 1} is not a finite number; leave failed runs out of the fit.", nameof(observed));
            for (var j = 0; j < coded.ColumnCount; j++)
                if (!double.IsFinite(coded[i, j]))
                    throw new ArgumentException($"Run {i + 1} has a non-finite coded value for {space[j].Name}.", nameof(coded));
        }
    }
}

/// <summary>
/// Centre and scale of a response (population standard deviation, as scikit-learn's normalize_y uses). A response
/// whose spread is below 1e-12 of its magnitude counts as constant: its scale is 1 so nothing divides by zero.
/// </summary>
public readonly record struct Standardization(double Mean, double Scale, bool IsConstant)
{
    public static Standardization Of(IReadOnlyList<double> values)
    {
        ArgumentNullException.ThrowIfNull(values);
        var n = values.Count;
        var mean = 0.0;
        for (var i = 0; i < n; i++) mean += values[i];
        mean /= n;
        var ss = 0.0;
        var largest = 0.0;
        for (var i = 0; i < n; i++)
        {
            var d = values[i] - mean;
            ss += d * d;
            largest = Math.Max(largest, Math.Abs(values[i]));
        }
        var sd = Math.Sqrt(ss / n);
        var constant = !(sd > 1e-12 * largest) || sd == 0;
        return new(mean, constant ? 1 : sd, constant);
    }

    public double Apply(double value) => (value - Mean) / Scale;

    public double Undo(double standardized) => standardized * Scale + Mean;
}
