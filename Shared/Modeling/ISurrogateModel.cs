namespace Runfold.Shared.Modeling;

/// <summary>
/// A fitted estimator of one response: a surrogate plus what selection needs to compare it with others — its
/// kind, a readable description, and its cross-validated predictions at the training runs.
/// </summary>
public interface ISurrogateModel : IResponseSurrogate
{
    /// <summary>camelCase name of the model family: "linear", "interaction", "pureQuadratic", "quadratic",
    /// "gaussianProcess", "rbf", "ensemble", "constant".</summary>
    string Kind { get; }

    /// <summary>What was fitted, for people ("Gaussian process, Matérn 5/2 kernel, constant trend").</summary>
    string Description { get; }

    /// <summary>Predictions of each training run by a model that did not see it.</summary>
    CrossValidatedPredictions CrossValidation { get; }
}

/// <summary>Out-of-sample predictions of the training runs, in the response's units, and how they were made.</summary>
public sealed record CrossValidatedPredictions(IReadOnlyList<double> Predicted, CrossValidationMethod Method, int Folds)
{
    /// <summary>"closed-form leave-one-out" or "10-fold".</summary>
    public string Describe() => Method == CrossValidationMethod.LeaveOneOut ? "closed-form leave-one-out" : $"{Folds}-fold";
}

public enum CrossValidationMethod
{
    LeaveOneOut,
    KFold,
}
