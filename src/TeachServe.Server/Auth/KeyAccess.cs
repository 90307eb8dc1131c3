using System.Security.Claims;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Auth;

/// <summary>
/// Endpoint access by key role. A key of another project (or session) gets 404, as if the resource did not
/// exist; a key of the right project but the wrong role gets 403. The admin key may do what an owner may.
/// </summary>
public static class KeyAccess
{
    public static TBuilder RequireKey<TBuilder>(this TBuilder builder, params KeyRole[] roles)
        where TBuilder : IEndpointConventionBuilder =>
        builder.AddEndpointFilter(new KeyFilter(roles));

    public static KeyRole Role(this ClaimsPrincipal user) => Enum.Parse<KeyRole>(user.FindFirstValue(KeyClaims.Role)!);

    public static string? ProjectId(this ClaimsPrincipal user) => user.FindFirstValue(KeyClaims.Project);

    private sealed class KeyFilter(KeyRole[] roles) : IEndpointFilter
    {
        public async ValueTask<object?> InvokeAsync(EndpointFilterInvocationContext context, EndpointFilterDelegate next)
        {
            var http = context.HttpContext;
            var user = http.User;
            if (user.Identity?.IsAuthenticated != true) return TypedResults.Challenge();

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
            if (!allowed)
                return Problems.Forbidden($"A {role.ToString().ToLowerInvariant()} key cannot do this; it needs a {string.Join(" or ", roles.Select(r => r.ToString().ToLowerInvariant()))} key.");
            return await next(context);
        }
    }
}
