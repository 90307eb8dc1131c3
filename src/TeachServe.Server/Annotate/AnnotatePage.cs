using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Annotate;

/// <summary>The annotator page: one HTML shell for every session; its ES module does the rest through the API.</summary>
public static class AnnotatePage
{
    public static IServiceCollection AddAnnotatePage(this IServiceCollection services)
    {
        services.AddOptions<AnnotateOptions>().BindConfiguration(AnnotateOptions.Section).ValidateOnStart();
        services.AddSingleton<IValidateOptions<AnnotateOptions>, AnnotateOptionsValidator>();
        return services;
    }

    public static IEndpointRouteBuilder MapAnnotatePage(this IEndpointRouteBuilder app)
    {
        app.MapGet("/annotate/{sessionId}", Page).ExcludeFromDescription().DisableAntiforgery();
        return app;
    }

    private static IResult Page(string sessionId, HttpResponse response, IOptions<AnnotateOptions> options)
    {
        PageHeaders.Apply(response, FrameAncestors(options.Value), externalImages: true, formAction: "'none'");
        return Results.Content(PageAssets.Page("annotate.html"), "text/html; charset=utf-8");
    }

    public static string FrameAncestors(AnnotateOptions o) =>
        string.Join(' ', o.FrameAncestors.Prepend("'self'"));
}
