using System.Text.Json;
using Microsoft.AspNetCore.Diagnostics;
using Microsoft.AspNetCore.Mvc;

namespace Runfold.Server.Hosting;

/// <summary>
/// A body that is not valid JSON, or a value of the wrong type, becomes 400 problem details that name where
/// the body went wrong (for example <c>$.factors[0].low</c>), instead of an empty 400.
/// </summary>
public sealed class BadRequestExceptionHandler(IProblemDetailsService problems) : IExceptionHandler
{
    public async ValueTask<bool> TryHandleAsync(HttpContext httpContext, Exception exception, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(httpContext);
        if (exception is not BadHttpRequestException bad) return false;
        var json = bad.InnerException as JsonException;
        var detail = json is null
            ? bad.Message
            : json.Path is { Length: > 1 } path
                ? $"The request body could not be read at {path}: {Reason(json)}"
                : $"The request body is not valid JSON: {Reason(json)}";
        httpContext.Response.StatusCode = bad.StatusCode;
        var problem = new ProblemDetails { Status = bad.StatusCode, Title = "The request is not valid", Detail = detail };
        if (json?.Path is { Length: > 1 } field)
            problem.Extensions["errors"] = new Dictionary<string, string[]> { [FieldName(field)] = [detail] };
        return await problems.TryWriteAsync(new ProblemDetailsContext { HttpContext = httpContext, ProblemDetails = problem, Exception = exception });
    }

    /// <summary>The first sentence of the serializer's message, without its line and byte positions.</summary>
    private static string Reason(JsonException json)
    {
        var message = json.Message;
        var cut = message.IndexOf(" Path:", StringComparison.Ordinal);
        if (cut < 0) cut = message.IndexOf(" LineNumber:", StringComparison.Ordinal);
        message = cut > 0 ? message[..cut] : message;
        return message.Replace("System.Double", "a number", StringComparison.Ordinal)
            .Replace("System.Int32", "a whole number", StringComparison.Ordinal)
            .Replace("System.String", "text", StringComparison.Ordinal)
            .Replace("System.Nullable`1[a number]", "a number", StringComparison.Ordinal);
    }

    /// <summary>"$.factors[0].low" → "factors[0].low", the spelling of validation errors.</summary>
    private static string FieldName(string path) => path.StartsWith("$.", StringComparison.Ordinal) ? path[2..] : path.TrimStart('$');
}
