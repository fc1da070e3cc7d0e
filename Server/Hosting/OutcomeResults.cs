using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.AspNetCore.Mvc;
using Runfold.Shared.Studies;

namespace Runfold.Server.Hosting;

/// <summary>Outcome → HTTP answer: the value on success, problem details with the outcome's sentence otherwise.</summary>
public static class OutcomeResults
{
    public static IResult ToResult<T>(this Outcome<T> outcome, Func<T, IResult> ok)
    {
        ArgumentNullException.ThrowIfNull(outcome);
        ArgumentNullException.ThrowIfNull(ok);
        return outcome.Kind switch
        {
            OutcomeKind.Ok => ok(outcome.Value!),
            OutcomeKind.Invalid => Validation(outcome, StatusCodes.Status400BadRequest),
            OutcomeKind.Unprocessable => Validation(outcome, StatusCodes.Status422UnprocessableEntity),
            OutcomeKind.NotFound => Problem(StatusCodes.Status404NotFound, "Not found", outcome.Message),
            OutcomeKind.Forbidden => Problem(StatusCodes.Status403Forbidden, "Not allowed", outcome.Message),
            OutcomeKind.Conflict => Problem(StatusCodes.Status409Conflict, "Conflict", outcome.Message),
            _ => throw new InvalidOperationException($"Unknown outcome {outcome.Kind}."),
        };
    }

    public static IResult ToResult<T>(this Outcome<T> outcome) => outcome.ToResult(v => TypedResults.Ok(v));

    public static ProblemHttpResult Problem(int status, string title, string? detail) =>
        TypedResults.Problem(new ProblemDetails { Status = status, Title = title, Detail = detail });

    private static ProblemHttpResult Validation<T>(Outcome<T> outcome, int status) =>
        TypedResults.Problem(new HttpValidationProblemDetails(outcome.Errors?.ToDictionary() ?? [])
        {
            Status = status,
            Title = status == StatusCodes.Status400BadRequest ? "The request is not valid" : "The request cannot be carried out",
            Detail = outcome.Message,
        });
}
