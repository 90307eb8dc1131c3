using System.Security.Claims;
using System.Threading.RateLimiting;
using Microsoft.AspNetCore.Mvc;
using Microsoft.Extensions.Options;
using TeachServe.Server.Auth;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// A fixed window of requests per key (per client address for requests without a valid key), and a smaller one
/// per client address at the doors that take a secret without a key (<see cref="CredentialPolicy"/>); 429 with
/// Retry-After. Every bucket belongs to one key or one address, so no client can use up anybody else's.
/// </summary>
public static class RateLimiting
{
    /// <summary>Launch-link redemption and console sign-in: guesses are limited per client address.</summary>
    public const string CredentialPolicy = "credentials";

    public static IServiceCollection AddKeyRateLimits(this IServiceCollection services) =>
        services.AddRateLimiter(o =>
        {
            o.RejectionStatusCode = StatusCodes.Status429TooManyRequests;
            o.GlobalLimiter = PartitionedRateLimiter.Create<HttpContext, string>(http =>
            {
                var limits = Limits(http);
                var partition = http.User.FindFirstValue(KeyClaims.KeyId) ?? "address:" + ClientAddress(http);
                return RateLimitPartition.GetFixedWindowLimiter(partition, _ => new FixedWindowRateLimiterOptions
                {
                    PermitLimit = limits.PermitLimit,
                    Window = limits.Window,
                    QueueLimit = 0,
                });
            });
            o.AddPolicy(CredentialPolicy, http =>
            {
                var limits = Limits(http);
                return RateLimitPartition.GetFixedWindowLimiter("address:" + ClientAddress(http), _ => new FixedWindowRateLimiterOptions
                {
                    PermitLimit = limits.CredentialPermitLimit,
                    Window = limits.Window,
                    QueueLimit = 0,
                });
            });
            o.OnRejected = async (context, ct) =>
            {
                var http = context.HttpContext;
                var seconds = context.Lease.TryGetMetadata(MetadataName.RetryAfter, out var retryAfter)
                    ? Math.Max(1, (int)Math.Ceiling(retryAfter.TotalSeconds))
                    : 1;
                http.Response.Headers.RetryAfter = seconds.ToString(System.Globalization.CultureInfo.InvariantCulture);
                await http.RequestServices.GetRequiredService<IProblemDetailsService>().WriteAsync(new ProblemDetailsContext
                {
                    HttpContext = http,
                    ProblemDetails = new ProblemDetails
                    {
                        Status = StatusCodes.Status429TooManyRequests,
                        Title = "Too many requests",
                        Detail = http.User.Identity?.IsAuthenticated == true
                            ? $"This key has used its requests for now; retry after {seconds} s."
                            : $"This address has used its requests for now; retry after {seconds} s.",
                    },
                });
            };
        });

    /// <summary>The client's address: the connection's peer, or what a known proxy forwarded (<see cref="ForwardedHeaderSetup"/>).</summary>
    public static string ClientAddress(HttpContext http) => http.Connection.RemoteIpAddress?.ToString() ?? "unknown";

    private static RateLimitOptions Limits(HttpContext http) =>
        http.RequestServices.GetRequiredService<IOptions<TeachServeOptions>>().Value.RateLimit;
}
