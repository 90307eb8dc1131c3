using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.AspNetCore.Mvc;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// The one problem factory: every RFC 9457 answer of the API is built here, whether an operation returns it or the
/// exception handler writes it for a real failure. Titles are stable (clients may match on them); the type URI is the
/// framework's RFC 9110 link for the status, filled in when the problem is written.
/// </summary>
public static class Problems
{
    /// <summary>The title of each problem kind, by status; a kind with its own title says so where it is built.</summary>
    public static class Titles
    {
        public const string BadRequest = "Bad request";
        public const string Forbidden = "Forbidden";
        public const string NotFound = "Not found";
        public const string Conflict = "Conflict";
        public const string TooLarge = "Request too large";
        public const string UnsupportedMediaType = "Unsupported media type";
        public const string Unprocessable = "Invalid content";
        public const string MalformedJson = "Malformed JSON";
        public const string ServerError = "Server error";
        public const string DatabaseUnavailable = "Database unavailable";
    }

    public static ProblemHttpResult NotFound(string detail) => Of(StatusCodes.Status404NotFound, Titles.NotFound, detail);

    public static ProblemHttpResult Conflict(string detail, IDictionary<string, object?>? extensions = null) =>
        Of(StatusCodes.Status409Conflict, Titles.Conflict, detail, extensions);

    public static ProblemHttpResult BadRequest(string detail) => Of(StatusCodes.Status400BadRequest, Titles.BadRequest, detail);

    public static ProblemHttpResult Unprocessable(string detail, IDictionary<string, object?>? extensions = null) =>
        Of(StatusCodes.Status422UnprocessableEntity, Titles.Unprocessable, detail, extensions);

    /// <summary>422 with the list of what is wrong as <c>errors</c> (field names, lines, or sentences).</summary>
    public static ProblemHttpResult Invalid<TError>(string detail, IEnumerable<TError> errors) =>
        Unprocessable(detail, new Dictionary<string, object?> { ["errors"] = errors.ToList() });

    public static ProblemHttpResult Forbidden(string detail) => Of(StatusCodes.Status403Forbidden, Titles.Forbidden, detail);

    /// <summary>A problem of a kind with its own title (e.g. 429 "Too many simulations", 504 "Image host timed out").</summary>
    public static ProblemHttpResult Of(int status, string title, string detail, IDictionary<string, object?>? extensions = null) =>
        TypedResults.Problem(Details(status, title, detail, extensions));

    /// <summary>The same problem as a plain <see cref="ProblemDetails"/>, for the exception handler.</summary>
    public static ProblemDetails Details(int status, string title, string detail, IDictionary<string, object?>? extensions = null)
    {
        var problem = new ProblemDetails { Status = status, Title = title, Detail = detail };
        if (extensions is not null)
            foreach (var (key, value) in extensions) problem.Extensions[key] = value;
        return problem;
    }

    /// <summary>The title the API gives a bare status (request-reading failures the framework throws).</summary>
    public static string TitleFor(int status) => status switch
    {
        StatusCodes.Status403Forbidden => Titles.Forbidden,
        StatusCodes.Status404NotFound => Titles.NotFound,
        StatusCodes.Status409Conflict => Titles.Conflict,
        StatusCodes.Status413PayloadTooLarge => Titles.TooLarge,
        StatusCodes.Status415UnsupportedMediaType => Titles.UnsupportedMediaType,
        StatusCodes.Status422UnprocessableEntity => Titles.Unprocessable,
        _ => Titles.BadRequest,
    };
}
