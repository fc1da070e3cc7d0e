namespace Runfold.Server.Hosting;

/// <summary>
/// The sentence of a problem that the framework raises itself (an unknown address, a method an address does not
/// take, an unhandled failure): problem details carry a title, and a person needs to read what to do next.
/// Problems the services raise bring their own sentence and are left as they are.
/// </summary>
public static class ProblemSentences
{
    public static string For(int status, string method, string path) => status switch
    {
        StatusCodes.Status400BadRequest => "The request could not be read; compare it with the API reference at /api-docs.",
        StatusCodes.Status401Unauthorized => "Sign in, or send an API token as 'Authorization: Bearer <token>'.",
        StatusCodes.Status403Forbidden => "Your account is not allowed to do this.",
        StatusCodes.Status404NotFound => $"Nothing answers {method} {path}; the API reference at /api-docs lists every address.",
        StatusCodes.Status405MethodNotAllowed => $"{path} does not take {method}; the API reference at /api-docs says what it takes.",
        StatusCodes.Status413PayloadTooLarge => "The request is larger than this server accepts.",
        StatusCodes.Status415UnsupportedMediaType => "Send the body as JSON with 'Content-Type: application/json' (files as multipart/form-data).",
        StatusCodes.Status429TooManyRequests => "Too many requests in a short time; wait a moment and try again.",
        >= 500 => "Something went wrong on the server and the request was not completed; nothing half-done was kept. The server's log has the details under this trace id.",
        _ => "The request was not completed.",
    };

    /// <summary>Fills the detail of problems that have none.</summary>
    public static void Fill(ProblemDetailsContext context)
    {
        ArgumentNullException.ThrowIfNull(context);
        if (!string.IsNullOrWhiteSpace(context.ProblemDetails.Detail)) return;
        var status = context.ProblemDetails.Status ?? context.HttpContext.Response.StatusCode;
        context.ProblemDetails.Detail = For(status, context.HttpContext.Request.Method, context.HttpContext.Request.Path);
    }
}
