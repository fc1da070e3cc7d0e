using System.Security.Claims;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.AspNetCore.Mvc;
using Runfold.Server.Auth;
using Runfold.Server.Hosting;
using Runfold.Shared.Studies;

namespace Runfold.Server.Results;

public static class ResultsApi
{
    public const string IdempotencyHeader = "Idempotency-Key";

    public static IServiceCollection AddResults(this IServiceCollection services)
    {
        services.AddScoped<ResultService>();
        services.AddScoped<BulkResults>();
        services.AddScoped<ResultExport>();
        return services;
    }

    public static IEndpointRouteBuilder MapResultsApi(this IEndpointRouteBuilder app)
    {
        var run = app.MapGroup("/api/runs/{id:int}").RequireAuthorization().WithTags("Results");

        run.MapPut("/result", async (int id, ResultRequest? request, [FromHeader(Name = IdempotencyHeader)] string? key,
                ClaimsPrincipal user, ResultService results, HttpContext http, CancellationToken ct) =>
            {
                var outcome = await results.PutAsync(Caller.From(user)!, id, request, key, ct);
                if (outcome.Value?.Replayed == true) http.Response.Headers["Idempotency-Replayed"] = "true";
                return outcome.ToResult();
            })
            .WithSummary("Upload a run's result as a new revision: {state: done|failed, values:{response: number}, note?, solverSeconds?}. " +
                         "Send an Idempotency-Key header: a retry with the same key returns the same revision and stores nothing new. " +
                         "A failed run needs the reason in note. Only the claim holder or the lead may post.")
            .Produces<ResultReceipt>()
            .ProducesValidationProblem()
            .ProducesValidationProblem(StatusCodes.Status422UnprocessableEntity)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status409Conflict);

        run.MapGet("/", async (int id, ClaimsPrincipal user, ResultService results, CancellationToken ct) =>
                (await results.HistoryAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("A run with every revision of its result, newest first.")
            .Produces<RunHistory>()
            .ProducesProblem(StatusCodes.Status404NotFound);

        run.MapPost("/reopen", async (int id, ClaimsPrincipal user, ResultService results, CancellationToken ct) =>
                (await results.ReopenAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("Return a failed run to the open pool for another try; its revisions stay as history.")
            .Produces<RunDto>()
            .ProducesProblem(StatusCodes.Status409Conflict);

        var study = app.MapGroup("/api/studies/{id:int}").RequireAuthorization().WithTags("Results");

        study.MapPost("/results", UploadAsync)
            .WithSummary("Bulk results: a multipart form with one CSV or XLSX file (field 'file'). Columns: run, one per response " +
                         "(case-insensitive, '[unit]' allowed), optional state and note; comma or semicolon separated. Every row is " +
                         "checked first, then all are stored in one transaction; otherwise 422 with a row/column list ('rows') and nothing stored.")
            .Accepts<IFormFile>("multipart/form-data")
            .Produces<BulkUploadReport>()
            .ProducesValidationProblem(StatusCodes.Status422UnprocessableEntity)
            .ProducesProblem(StatusCodes.Status413PayloadTooLarge)
            .DisableAntiforgery(); // bearer-token clients; the sign-in cookie is SameSite=Lax, so no cross-site post carries it

        study.MapGet("/export", async (int id, string? format, ClaimsPrincipal user, ResultExport export, CancellationToken ct) =>
            {
                ExportFormat? chosen = (format ?? "csv").ToUpperInvariant() switch
                {
                    "CSV" => ExportFormat.Csv,
                    "XLSX" => ExportFormat.Xlsx,
                    _ => null,
                };
                if (chosen is null)
                    return OutcomeResults.Problem(StatusCodes.Status400BadRequest, "The request is not valid", $"'{format}' is not an export format; use csv or xlsx.");
                return (await export.ExportAsync(Caller.From(user)!, id, chosen.Value, ct))
                    .ToResult(f => TypedResults.File(f.Content, f.ContentType, f.FileName));
            })
            .WithSummary("The runs with factors, states and current results as ?format=csv (default) or xlsx; uploads again unchanged.")
            .Produces(StatusCodes.Status200OK)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }

    private static async Task<IResult> UploadAsync(int id, HttpContext http, ClaimsPrincipal user, BulkResults bulk,
        RunfoldSettings settings, CancellationToken ct)
    {
        var limit = settings.MaxUploadBytes;
        if (http.Request.ContentLength is { } length && length > limit + 64 * 1024) return TooLarge(length, limit);
        if (!http.Request.HasFormContentType)
            return OutcomeResults.Problem(StatusCodes.Status400BadRequest, "The request is not valid",
                "Send the file as multipart/form-data in a field named 'file' (curl -F file=@results.csv …).");
        IFormCollection form;
        try
        {
            form = await http.Request.ReadFormAsync(new FormOptions { MultipartBodyLengthLimit = limit + 64 * 1024 }, ct);
        }
        catch (InvalidDataException)
        {
            return TooLarge(null, limit);
        }
        var file = form.Files.GetFile("file") ?? form.Files.FirstOrDefault();
        if (file is null)
            return OutcomeResults.Problem(StatusCodes.Status400BadRequest, "The request is not valid", "The form has no file; send it in a field named 'file'.");
        if (file.Length > limit) return TooLarge(file.Length, limit);
        using var buffer = new MemoryStream((int)file.Length);
        await file.CopyToAsync(buffer, ct);
        var answer = await bulk.UploadAsync(Caller.From(user)!, id, file.FileName, buffer.ToArray(), ct);
        return ToResult(answer);
    }

    /// <summary>422 carries the row/column list as <c>rows</c> beside the usual <c>errors</c> map.</summary>
    internal static IResult ToResult(BulkUploadResult answer)
    {
        if (answer.Outcome.Kind != OutcomeKind.Unprocessable || answer.Rows.Count == 0) return answer.Outcome.ToResult();
        var problem = new HttpValidationProblemDetails(answer.Outcome.Errors?.ToDictionary() ?? [])
        {
            Status = StatusCodes.Status422UnprocessableEntity,
            Title = "The file cannot be stored",
            Detail = answer.Outcome.Message,
        };
        problem.Extensions["rows"] = answer.Rows;
        return TypedResults.Problem(problem);
    }

    internal static string TooLargeMessage(long? size, long limit) =>
        (size is { } s ? $"The file is {Megabytes(s)}; " : "The file is too large; ") +
        $"the largest results file is {Megabytes(limit)} (RUNFOLD_MAX_UPLOAD_MB). Split it into several files of fewer rows; nothing was stored.";

    private static IResult TooLarge(long? size, long limit) =>
        OutcomeResults.Problem(StatusCodes.Status413PayloadTooLarge, "The file is too large", TooLargeMessage(size, limit));

    private static string Megabytes(long bytes) =>
        (bytes / (1024.0 * 1024.0)).ToString("0.#", System.Globalization.CultureInfo.InvariantCulture) + " MB";
}
