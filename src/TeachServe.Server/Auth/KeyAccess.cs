using System.Security.Claims;
using Microsoft.AspNetCore.Authentication;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Auth;

/// <summary>
/// Endpoint access by key role. A key of another project (or session) gets 404, as if the resource did not
/// exist; a key of the right project but the wrong role gets 403. The admin key may do what an owner may.
/// The check runs as middleware, after routing and before the endpoint binds its parameters, so a request
/// without a valid key is answered 401 before a byte of its body is read or parsed.
/// </summary>
public static class KeyAccess
{
    public static TBuilder RequireKey<TBuilder>(this TBuilder builder, params KeyRole[] roles)
        where TBuilder : IEndpointConventionBuilder =>
        builder.WithMetadata(new KeyRequirement(roles));

    public static KeyRole Role(this ClaimsPrincipal user) => Enum.Parse<KeyRole>(user.FindFirstValue(KeyClaims.Role)!);

    public static string? ProjectId(this ClaimsPrincipal user) => user.FindFirstValue(KeyClaims.Project);

    /// <summary>Enforces <see cref="RequireKey{TBuilder}"/>; place after authentication and rate limiting.</summary>
    public static IApplicationBuilder UseKeyAccess(this IApplicationBuilder app) => app.Use(async (http, next) =>
    {
        var requirements = http.GetEndpoint()?.Metadata.GetOrderedMetadata<KeyRequirement>() ?? [];
        foreach (var requirement in requirements)
        {
            if (Check(http, requirement.Roles) is not { } refusal) continue;
            if (refusal == Challenge) await http.ChallengeAsync();
            else await refusal.ExecuteAsync(http);
            return;
        }
        await next(http);
    });

    private static readonly IResult Challenge = TypedResults.Challenge();

    private static IResult? Check(HttpContext http, KeyRole[] roles)
    {
        var user = http.User;
        if (user.Identity?.IsAuthenticated != true) return Challenge;

        var role = user.Role();
        var route = http.Request.RouteValues;
        if (role != KeyRole.Admin
            && route.TryGetValue("projectId", out var projectId)
            && !string.Equals(projectId as string, user.ProjectId(), StringComparison.Ordinal))
            return Problems.NotFound("No such project.");
        if (role == KeyRole.Session
            && route.TryGetValue("sessionId", out var sessionId)
            && !string.Equals(sessionId as string, user.FindFirstValue(KeyClaims.Session), StringComparison.Ordinal))
            return Problems.NotFound("No such session.");

        var allowed = roles.Contains(role) || (role == KeyRole.Admin && roles.Contains(KeyRole.Owner));
        return allowed
            ? null
            : Problems.Forbidden($"A {role.ToString().ToLowerInvariant()} key cannot do this; it needs a {string.Join(" or ", roles.Select(r => r.ToString().ToLowerInvariant()))} key.");
    }

    /// <summary>Endpoint metadata: the key roles that may call it.</summary>
    public sealed record KeyRequirement(KeyRole[] Roles);
}
