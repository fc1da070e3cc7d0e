using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Sensitivity;

/// <summary>A known function seen as a surrogate: coded rows → natural values → the function. The checks against
/// published analytic results run the same code paths as the fitted models.</summary>
internal sealed class FunctionSurrogate(FactorSpace space, Func<double[], double> function, Func<double[], double>? sd = null) : IResponseSurrogate
{
    public FactorSpace Space { get; } = space;

    public bool HasUncertainty => sd is not null;

    public int Evaluations { get; private set; }

    public Prediction Predict(Matrix<double> codedPoints)
    {
        var mean = new double[codedPoints.RowCount];
        var spread = sd is null ? null : new double[codedPoints.RowCount];
        for (var i = 0; i < mean.Length; i++)
        {
            var natural = Space.FromCoded(codedPoints.Row(i).ToArray());
            mean[i] = function(natural);
            if (spread is not null) spread[i] = sd!(natural);
        }
        Evaluations += mean.Length;
        return new Prediction(mean, spread);
    }

    public static FactorSpace Continuous(params (string Name, double Low, double High)[] factors) =>
        FactorSpace.Create([.. factors.Select(f => new FactorSpec(f.Name, Low: f.Low, High: f.High))]).Value!;
}
