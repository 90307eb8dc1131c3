using Microsoft.AspNetCore.OutputCaching;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// The OpenAPI document is the same for every caller and only changes with the server's code, yet the framework
/// builds it anew per request (tens of milliseconds of CPU). This output-cache policy keeps the first 200 answer
/// for the life of the process; concurrent first requests share one build (locking), and neither the Host header,
/// the query string nor an Authorization header makes a new entry, so no request can force a rebuild.
/// </summary>
public static class OpenApiDocumentCache
{
    public const string PolicyName = "openapi-document";

    public static IServiceCollection AddOpenApiDocumentCache(this IServiceCollection services) =>
        services.AddOutputCache(o => o.AddPolicy(PolicyName, new Policy()));

    private sealed class Policy : IOutputCachePolicy
    {
        public ValueTask CacheRequestAsync(OutputCacheContext context, CancellationToken cancellation)
        {
            context.EnableOutputCaching = true;
            context.AllowCacheLookup = HttpMethods.IsGet(context.HttpContext.Request.Method) || HttpMethods.IsHead(context.HttpContext.Request.Method);
            context.AllowCacheStorage = context.AllowCacheLookup;
            context.AllowLocking = true;
            context.ResponseExpirationTimeSpan = TimeSpan.FromDays(365);
            context.CacheVaryByRules.VaryByHost = false;
            return ValueTask.CompletedTask;
        }

        public ValueTask ServeFromCacheAsync(OutputCacheContext context, CancellationToken cancellation) => ValueTask.CompletedTask;

        public ValueTask ServeResponseAsync(OutputCacheContext context, CancellationToken cancellation)
        {
            if (context.HttpContext.Response.StatusCode != StatusCodes.Status200OK) context.AllowCacheStorage = false;
            return ValueTask.CompletedTask;
        }
    }
}
