using System.Security.Claims;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Authentication.Cookies;
using Microsoft.AspNetCore.DataProtection;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Auth;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// Owners sign in to the console once with their project's owner key; the browser then holds an HttpOnly, Secure,
/// SameSite=Strict cookie scoped to <c>/console</c> (an encrypted ticket naming the project and a fingerprint of
/// the owner key hash, never the key). Every form also carries an anti-forgery token.
/// Both are encrypted with data protection keys kept in the database, so a cookie or form from one node is
/// accepted by every other, and survives restarts.
/// </summary>
public static class ConsoleAuth
{
    public const string Scheme = "TeachServeConsole";
    public const string CookieName = "teachserve-console";
    public const string Path = "/console";
    private const string FingerprintClaim = "ts:owner-key";

    public const string ApplicationName = "TeachServe";

    public static IServiceCollection AddConsoleAuth(this IServiceCollection services)
    {
        // The application name, not the default (the content root path), isolates the key ring: nodes installed
        // in different folders share it.
        services.AddDataProtection().SetApplicationName(ApplicationName).PersistKeysToDbContext<TeachServeDb>();
        services.AddScoped<IStartupStep, ConsoleKeyRing>();
        services.AddAuthentication().AddCookie(Scheme, o =>
        {
            o.Cookie.Name = CookieName;
            o.Cookie.Path = Path;
            o.Cookie.HttpOnly = true;
            o.Cookie.SecurePolicy = CookieSecurePolicy.Always;
            o.Cookie.SameSite = SameSiteMode.Strict;
            o.ExpireTimeSpan = TimeSpan.FromHours(8);
            o.SlidingExpiration = true;
            // The console draws its own sign-in page; the handler must not redirect API-style.
            o.Events.OnRedirectToLogin = c => { c.Response.StatusCode = StatusCodes.Status401Unauthorized; return Task.CompletedTask; };
        });
        services.AddAntiforgery(o =>
        {
            o.Cookie.Name = "teachserve-console-form";
            o.Cookie.Path = Path;
            o.Cookie.HttpOnly = true;
            // Only half of the anti-forgery pair and no credential; Always would make antiforgery refuse plain-http loopback use.
            o.Cookie.SecurePolicy = CookieSecurePolicy.SameAsRequest;
            o.Cookie.SameSite = SameSiteMode.Strict;
            o.FormFieldName = "__form";
        });
        return services;
    }

    /// <summary>The project of a valid owner key, or null. Other kinds of key (admin, embed, session) are refused here.</summary>
    public static async Task<Project?> CheckOwnerKeyAsync(TeachServeDb db, string? key, CancellationToken ct)
    {
        key = key?.Trim();
        if (string.IsNullOrEmpty(key) || !ApiKeys.TryParse(key, out var prefix, out var projectId) || prefix != ApiKeys.OwnerPrefix)
            return null;
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        return project is not null && ApiKeys.Matches(key, project.OwnerKeyHash) ? project : null;
    }

    public static Task SignInAsync(HttpContext http, Project project)
    {
        var identity = new ClaimsIdentity(
            [new Claim(KeyClaims.Project, project.Id), new Claim(FingerprintClaim, Fingerprint(project))], Scheme);
        return http.SignInAsync(Scheme, new ClaimsPrincipal(identity), new AuthenticationProperties { IsPersistent = false });
    }

    public static Task SignOutAsync(HttpContext http) => http.SignOutAsync(Scheme);

    /// <summary>The signed-in project, or null when there is no cookie, or its project or owner key is gone.</summary>
    public static async Task<Project?> CurrentAsync(HttpContext http, TeachServeDb db, CancellationToken ct)
    {
        var result = await http.AuthenticateAsync(Scheme);
        if (!result.Succeeded) return null;
        var projectId = result.Principal.FindFirstValue(KeyClaims.Project);
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        return project is not null && result.Principal.FindFirstValue(FingerprintClaim) == Fingerprint(project) ? project : null;
    }

    /// <summary>Ties the cookie to the key in force: a replaced owner key signs every console out.</summary>
    private static string Fingerprint(Project project) => Convert.ToHexStringLower(project.OwnerKeyHash)[..16];
}

/// <summary>
/// Loads the key ring at start, creating the first key if the database has none, before the node reports
/// ready. Nodes started one after another (the local script, compose) then all use the first node's key; two
/// nodes creating a key at the same moment would each sign with their own until they reread the ring.
/// </summary>
public sealed class ConsoleKeyRing(IDataProtectionProvider protection) : IStartupStep
{
    public Task RunAsync(TeachServeDb db, StartupBanner banner, CancellationToken ct)
    {
        protection.CreateProtector("TeachServe.Startup").Protect([1]);
        // Said here instead of data protection's own "No XML encryptor configured" warning (filtered in Program.cs).
        banner.Add("Console keys", "stored in the database, not encrypted at rest (SECURITY.md, \"Owner console\")");
        return Task.CompletedTask;
    }
}

