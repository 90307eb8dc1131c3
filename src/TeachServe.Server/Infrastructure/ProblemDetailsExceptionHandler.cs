using System.Text.Json;
using Microsoft.AspNetCore.Diagnostics;
using Microsoft.EntityFrameworkCore;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// The one place where exceptions become responses (built by <see cref="Problems"/>). Operations return the problems a
/// client can act on instead of throwing them; what still arrives here is request-binding failures and concurrency
/// conflicts, which map to 4xx problem details; an unreachable database to 503 with
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
            BadHttpRequestException e => Problems.Details(e.StatusCode, TitleFor(e.StatusCode), ProblemText.Describe(e)),
            JsonException e => Problems.Details(StatusCodes.Status400BadRequest, Problems.Titles.MalformedJson, ProblemText.Describe(e)),
            DbUpdateConcurrencyException => Problems.Details(StatusCodes.Status409Conflict, Problems.Titles.Conflict,
                "The resource was changed by another request; read it again and retry."),
            _ when DatabaseUnavailable.Is(exception) => Problems.Details(StatusCodes.Status503ServiceUnavailable, Problems.Titles.DatabaseUnavailable,
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
            problem = Problems.Details(StatusCodes.Status500InternalServerError, Problems.Titles.ServerError,
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

    /// <summary>A request-reading failure is one of three kinds; any other status it carries reads as a bad request.</summary>
    private static string TitleFor(int status) =>
        status is StatusCodes.Status413PayloadTooLarge or StatusCodes.Status415UnsupportedMediaType ? Problems.TitleFor(status) : Problems.Titles.BadRequest;

    [LoggerMessage(Level = LogLevel.Warning, Message = "Database unavailable for {Method} {Path}: {Reason}")]
    private static partial void LogDatabaseUnavailable(ILogger logger, string method, string path, string reason);

    [LoggerMessage(Level = LogLevel.Error, Message = "Unhandled exception for {Method} {Path}")]
    private static partial void LogUnhandled(ILogger logger, Exception exception, string method, string path);
}
