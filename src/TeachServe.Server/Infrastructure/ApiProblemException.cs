namespace TeachServe.Server.Infrastructure;

/// <summary>
/// A client error thrown from deep in a request; the exception handler writes it with <see cref="Problems"/>. Operations
/// return their problems instead (<see cref="Outcome{T}"/>); this remains for the request paths not yet converted.
/// </summary>
public sealed class ApiProblemException(int status, string title, string detail) : Exception(detail)
{
    public int Status { get; } = status;
    public string Title { get; } = title;
    public IDictionary<string, object?> Extensions { get; } = new Dictionary<string, object?>();

    public static ApiProblemException NotFound(string detail) => Of(StatusCodes.Status404NotFound, detail);
    public static ApiProblemException Conflict(string detail) => Of(StatusCodes.Status409Conflict, detail);
    public static ApiProblemException BadRequest(string detail) => Of(StatusCodes.Status400BadRequest, detail);
    public static ApiProblemException Unprocessable(string detail) => Of(StatusCodes.Status422UnprocessableEntity, detail);
    public static ApiProblemException TooLarge(string detail) => Of(StatusCodes.Status413PayloadTooLarge, detail);

    public ApiProblemException With(string key, object? value)
    {
        Extensions[key] = value;
        return this;
    }

    private static ApiProblemException Of(int status, string detail) => new(status, Problems.TitleFor(status), detail);
}
