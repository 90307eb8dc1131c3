using System.Text.Encodings.Web;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Mvc;
using Microsoft.Extensions.Options;

namespace TeachServe.Server.Auth;

/// <summary><c>Authorization: Bearer &lt;key&gt;</c> for all four kinds of key; challenges answer 401 problem details.</summary>
public sealed class KeyAuthenticationHandler(
    IOptionsMonitor<AuthenticationSchemeOptions> options,
    ILoggerFactory logger,
    UrlEncoder encoder,
    KeyResolver resolver,
    IProblemDetailsService problems) : AuthenticationHandler<AuthenticationSchemeOptions>(options, logger, encoder)
{
    public const string SchemeName = "TeachServeKey";

    protected override async Task<AuthenticateResult> HandleAuthenticateAsync()
    {
        string? header = Request.Headers.Authorization;
        if (string.IsNullOrEmpty(header)) return AuthenticateResult.NoResult();
        if (!header.StartsWith("Bearer ", StringComparison.OrdinalIgnoreCase))
            return AuthenticateResult.Fail("Use 'Authorization: Bearer <key>'.");
        var check = await resolver.CheckAsync(header["Bearer ".Length..].Trim(), Context.RequestAborted);
        if (check.SessionRow is { } row) Context.Features.Set(new SessionRowFeature(row));
        return check.Principal is { } principal
            ? AuthenticateResult.Success(new AuthenticationTicket(principal, SchemeName))
            : AuthenticateResult.Fail(check.Failure!);
    }

    protected override async Task HandleChallengeAsync(AuthenticationProperties properties)
    {
        var result = await HandleAuthenticateOnceSafeAsync();
        Response.StatusCode = StatusCodes.Status401Unauthorized;
        Response.Headers.WWWAuthenticate = "Bearer";
        await problems.WriteAsync(new ProblemDetailsContext
        {
            HttpContext = Context,
            ProblemDetails = new ProblemDetails
            {
                Status = StatusCodes.Status401Unauthorized,
                Title = "Unauthorized",
                Detail = result.Failure?.Message ?? "This request needs 'Authorization: Bearer <key>'.",
            },
        });
    }
}
