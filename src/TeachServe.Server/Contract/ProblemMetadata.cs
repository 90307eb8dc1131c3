using Microsoft.AspNetCore.Mvc;

namespace TeachServe.Server.Contract;

public static class ProblemMetadata
{
    /// <summary>
    /// Declares a problem details answer of the endpoint's handler, with what it means here (the framework's
    /// <c>ProducesProblem</c> can only say "Conflict").
    /// </summary>
    public static TBuilder Problem<TBuilder>(this TBuilder builder, int statusCode, string description)
        where TBuilder : IEndpointConventionBuilder =>
        builder.WithMetadata(new ProducesResponseTypeMetadata(statusCode, typeof(ProblemDetails), [ApiContract.ProblemMediaType])
        {
            Description = description,
        });
}
