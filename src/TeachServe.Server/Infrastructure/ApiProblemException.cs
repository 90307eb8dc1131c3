namespace TeachServe.Server.Infrastructure;

/// <summary>
/// A client error raised deep in a request (parsers, the answer writer); the exception handler turns it
/// into an RFC 9457 problem details response with this status.
/// </summary>
public sealed class ApiProblemException(int status, string title, string detail) : Exception(detail)
{
    public int Status { get; } = status;
    public string Title { get; } = title;
    public IDictionary<string, object?> Extensions { get; } = new Dictionary<string, object?>();

    public static ApiProblemException NotFound(string detail) => new(StatusCodes.Status404NotFound, "Not found", detail);
    public static ApiProblemException Conflict(string detail) => new(StatusCodes.Status409Conflict, "Conflict", detail);
    public static ApiProblemException BadRequest(string detail) => new(StatusCodes.Status400BadRequest, "Bad request", detail);
    public static ApiProblemException Unprocessable(string detail) =>
        new(StatusCodes.Status422UnprocessableEntity, "Invalid content", detail);
    public static ApiProblemException TooLarge(string detail) =>
        new(StatusCodes.Status413PayloadTooLarge, "Request too large", detail);

    public ApiProblemException With(string key, object? value)
    {
        Extensions[key] = value;
        return this;
    }
}
