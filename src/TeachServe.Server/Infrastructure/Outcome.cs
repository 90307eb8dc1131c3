using System.Diagnostics.CodeAnalysis;
using Microsoft.AspNetCore.Http.HttpResults;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// What an operation answers: its value, or the problem a client can act on (404, 409, 422, ...), returned rather than
/// thrown. Endpoints turn it into their typed result with <see cref="Answer{TOk}"/>; other callers read
/// <see cref="Value"/> or <see cref="Problem"/> (the console shows its detail and its <c>errors</c> beside the form
/// that caused it). <typeparamref name="T"/> is never a nullable type: <see cref="Succeeded"/> promises a value.
/// </summary>
public readonly struct Outcome<T>
{
    private Outcome(T? value, ProblemHttpResult? problem)
    {
        Value = value;
        Problem = problem;
    }

    public T? Value { get; }

    /// <summary>Null when the operation succeeded.</summary>
    public ProblemHttpResult? Problem { get; }

    [MemberNotNullWhen(true, nameof(Value))]
    [MemberNotNullWhen(false, nameof(Problem))]
    public bool Succeeded => Problem is null;

    public static implicit operator Outcome<T>(T value) => new(value, null);

    public static implicit operator Outcome<T>(ProblemHttpResult problem) => new(default, problem);

    /// <summary>The endpoint's answer: <paramref name="ok"/> of the value, or the problem.</summary>
    public Results<TOk, ProblemHttpResult> Answer<TOk>(Func<T, TOk> ok) where TOk : IResult =>
        Problem is { } problem ? problem : ok(Value!);
}
