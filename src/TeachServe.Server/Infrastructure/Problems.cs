using Microsoft.AspNetCore.Http.HttpResults;

namespace TeachServe.Server.Infrastructure;

/// <summary>The problem details responses handlers return directly.</summary>
public static class Problems
{
    public static ProblemHttpResult NotFound(string detail) =>
        TypedResults.Problem(detail, statusCode: StatusCodes.Status404NotFound, title: "Not found");

    public static ProblemHttpResult Conflict(string detail, IDictionary<string, object?>? extensions = null) =>
        TypedResults.Problem(detail, statusCode: StatusCodes.Status409Conflict, title: "Conflict", extensions: extensions);

    public static ProblemHttpResult BadRequest(string detail) =>
        TypedResults.Problem(detail, statusCode: StatusCodes.Status400BadRequest, title: "Bad request");

    public static ProblemHttpResult Unprocessable(string detail, IDictionary<string, object?>? extensions = null) =>
        TypedResults.Problem(detail, statusCode: StatusCodes.Status422UnprocessableEntity, title: "Invalid content", extensions: extensions);

    public static ProblemHttpResult Forbidden(string detail) =>
        TypedResults.Problem(detail, statusCode: StatusCodes.Status403Forbidden, title: "Forbidden");
}
