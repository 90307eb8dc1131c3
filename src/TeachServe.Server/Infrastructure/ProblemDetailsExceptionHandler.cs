using System.Text.Json;
using Microsoft.AspNetCore.Diagnostics;
using Microsoft.AspNetCore.Mvc;
using Microsoft.EntityFrameworkCore;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// The one place where exceptions become responses: our own <see cref="ApiProblemException"/>, request-binding
/// failures and concurrency conflicts map to 4xx problem details; an unreachable database to 503 with
/// Retry-After; anything else is logged and answered with a generic 500 that carries a trace id but never a
/// stack trace.
/// </summary>
public sealed partial class ProblemDetailsExceptionHandler(
    IProblemDetailsService problemDetails,
    Health.ReadinessProbe readiness,
    ILogger<ProblemDetailsExceptionHandler> logger) : IExceptionHandler
{
    public async ValueTask<bool> TryHandleAsync(HttpContext httpContext, Exception exception, CancellationToken cancellationToken)
    {
        var http = httpContext;
        if (exception is OperationCanceledException && http.RequestAborted.IsCancellationRequested)
        {
            // The client went away; nobody is listening for a body.
            http.Response.StatusCode = 499;
            return true;
        }

        var problem = exception switch
        {
            ApiProblemException e => Problem(e.Status, e.Title, e.Message, e.Extensions),
            BadHttpRequestException e => Problem(e.StatusCode, TitleFor(e.StatusCode), ProblemText.Describe(e)),
            JsonException e => Problem(StatusCodes.Status400BadRequest, "Malformed JSON", ProblemText.Describe(e)),
            DbUpdateConcurrencyException => Problem(StatusCodes.Status409Conflict, "Conflict",
                "The resource was changed by another request; read it again and retry."),
            _ when DatabaseUnavailable.Is(exception) => Problem(StatusCodes.Status503ServiceUnavailable, "Database unavailable",
                "The database cannot be reached right now; nothing was changed by this request. Retry shortly."),
            _ => null,
        };
        if (problem?.Status == StatusCodes.Status503ServiceUnavailable)
        {
            readiness.Forget();
            LogDatabaseUnavailable(logger, http.Request.Method, http.Request.Path, exception.GetBaseException().Message);
            http.Response.Headers.RetryAfter = ((int)DatabaseUnavailable.RetryAfter.TotalSeconds).ToString(System.Globalization.CultureInfo.InvariantCulture);
        }
        if (problem is null)
        {
            LogUnhandled(logger, exception, http.Request.Method, http.Request.Path);
            problem = Problem(StatusCodes.Status500InternalServerError, "Server error",
                "An unexpected error occurred. The trace id identifies it in the server log.");
        }

        http.Response.StatusCode = problem.Status!.Value;
        return await problemDetails.TryWriteAsync(new ProblemDetailsContext
        {
            HttpContext = http,
            ProblemDetails = problem,
            Exception = exception,
        });
    }

    private static ProblemDetails Problem(int status, string title, string detail, IDictionary<string, object?>? extensions = null)
    {
        var p = new ProblemDetails { Status = status, Title = title, Detail = detail };
        if (extensions is not null)
            foreach (var (k, v) in extensions) p.Extensions[k] = v;
        return p;
    }

    private static string TitleFor(int status) => status switch
    {
        StatusCodes.Status413PayloadTooLarge => "Request too large",
        StatusCodes.Status415UnsupportedMediaType => "Unsupported media type",
        _ => "Bad request",
    };

    [LoggerMessage(Level = LogLevel.Warning, Message = "Database unavailable for {Method} {Path}: {Reason}")]
    private static partial void LogDatabaseUnavailable(ILogger logger, string method, string path, string reason);

    [LoggerMessage(Level = LogLevel.Error, Message = "Unhandled exception for {Method} {Path}")]
    private static partial void LogUnhandled(ILogger logger, Exception exception, string method, string path);
}
