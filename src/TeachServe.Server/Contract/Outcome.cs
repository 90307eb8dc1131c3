using System.Diagnostics.CodeAnalysis;
using Microsoft.AspNetCore.Http.HttpResults;

namespace TeachServe.Server.Contract;

/// <summary>
/// What an operation returns: its value, or the problem details (made by <see cref="Infrastructure.Problems"/>) that
/// say why not. The API returns the problem as it is; the console shows its detail and its <c>errors</c> beside the
/// form that caused it.
/// </summary>
public readonly record struct Outcome<T>
{
    private Outcome(T? value, ProblemHttpResult? problem) => (Value, Problem) = (value, problem);

    public T? Value { get; }
    public ProblemHttpResult? Problem { get; }

    [MemberNotNullWhen(true, nameof(Value))]
    [MemberNotNullWhen(false, nameof(Problem))]
    public bool Succeeded => Problem is null;

    public static implicit operator Outcome<T>(T value) => new(value, null);
    public static implicit operator Outcome<T>(ProblemHttpResult problem) => new(default, problem);
}
