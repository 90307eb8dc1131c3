using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Sessions;

/// <summary>The result of a session operation: a value, or why the request was refused.</summary>
public readonly record struct SessionOutcome<T>(T? Value, SessionRefusal? Refusal) where T : class
{
    public static implicit operator SessionOutcome<T>(T value) => new(value, null);
    public static implicit operator SessionOutcome<T>(SessionRefusal refusal) => new(null, refusal);
}

/// <summary>
/// An expected refusal of a session operation (a client's mistake or a state it cannot change), with the HTTP status
/// it is answered with; a conflict over a step also says where the session is (<c>currentStep</c>, <c>phase</c>).
/// </summary>
public sealed record SessionRefusal(int Status, string Detail, int? CurrentStep = null, string? Phase = null)
{
    public static SessionRefusal BadRequest(string detail) => new(StatusCodes.Status400BadRequest, detail);
    public static SessionRefusal NotFound(string detail) => new(StatusCodes.Status404NotFound, detail);
    public static SessionRefusal Conflict(string detail, int? currentStep = null, string? phase = null) =>
        new(StatusCodes.Status409Conflict, detail, currentStep, phase);
    public static SessionRefusal Invalid(string detail) => new(StatusCodes.Status422UnprocessableEntity, detail);

    /// <summary>The refusal as RFC 9457 problem details, written through the server's problem details service.</summary>
    public ProblemHttpResult Problem()
    {
        Dictionary<string, object?>? where = null;
        if (CurrentStep is { } step) (where ??= [])["currentStep"] = step;
        if (Phase is { } phase) (where ??= [])["phase"] = phase;
        return Status switch
        {
            StatusCodes.Status400BadRequest => Problems.BadRequest(Detail),
            StatusCodes.Status404NotFound => Problems.NotFound(Detail),
            StatusCodes.Status409Conflict => Problems.Conflict(Detail, where),
            _ => Problems.Unprocessable(Detail, where),
        };
    }
}
