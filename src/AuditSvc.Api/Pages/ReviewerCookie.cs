using System.Security.Claims;
using AuditSvc.Api.Auth;
using AuditSvc.Data.Teams;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Authentication.Cookies;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Pages;

/// <summary>
/// The browser pages' sign-in: an API key typed into the login form is checked exactly as a Bearer key is, and
/// becomes a cookie ticket naming the team and the key's prefix. The ticket never carries the key itself; every
/// request looks the prefix up again, so revoking the key ends the session at the next request.
/// </summary>
internal static class ReviewerCookie
{
    public const string Scheme = "ReviewerCookie";
    public const string Policy = "reviewer";
    public const string PrefixClaim = "auditsvc:key_prefix";
    public const string CookieName = "auditsvc.session";

    /// <summary>Idle time after which the reviewer signs in again; each request slides it.</summary>
    public static readonly TimeSpan Idle = TimeSpan.FromHours(4);

    public static ClaimsPrincipal Principal(ApiKeyInfo key) => new(new ClaimsIdentity(
    [
        new Claim(ApiKeyHandler.TeamIdClaim, key.TeamId.ToString()),
        new Claim(ApiKeyHandler.TeamNameClaim, key.TeamName),
        new Claim(ClaimTypes.NameIdentifier, key.Id.ToString()),
        new Claim(ClaimTypes.Name, key.Name),
        new Claim(PrefixClaim, key.Prefix),
    ], Scheme));

    /// <summary>How a review is signed: the key's name and prefix (the prefix is what <c>keys list</c> shows).</summary>
    public static string Reviewer(ClaimsPrincipal user)
    {
        var name = user.FindFirstValue(ClaimTypes.Name) ?? "key";
        if (name.Length > 160) name = name[..160];
        return $"{name} ({user.FindFirstValue(PrefixClaim)})";
    }

    public static void Configure(CookieAuthenticationOptions o)
    {
        o.Cookie.Name = CookieName;
        o.Cookie.HttpOnly = true;
        o.Cookie.SameSite = SameSiteMode.Strict;
        o.Cookie.SecurePolicy = CookieSecurePolicy.SameAsRequest;
        o.Cookie.Path = "/";
        o.ExpireTimeSpan = Idle;
        o.SlidingExpiration = true;
        o.LoginPath = "/ui/login";
        o.LogoutPath = "/ui/logout";
        o.AccessDeniedPath = "/ui/login";
        o.ReturnUrlParameter = "returnUrl";
        o.Events.OnValidatePrincipal = ValidateAsync;
    }

    // One indexed lookup by prefix per request: cheap, and no cache that would let a revoked key live on.
    private static async Task ValidateAsync(CookieValidatePrincipalContext ctx)
    {
        var prefix = ctx.Principal?.FindFirstValue(PrefixClaim);
        var team = ctx.Principal?.FindFirstValue(ApiKeyHandler.TeamIdClaim);
        var keys = ctx.HttpContext.RequestServices.GetRequiredService<ApiKeyStore>();
        var live = prefix is null ? null : await keys.FindActiveAsync(prefix, ctx.HttpContext.RequestAborted);
        if (live is not null && live.TeamId.ToString() == team) return;
        ctx.RejectPrincipal();
        await ctx.HttpContext.SignOutAsync(Scheme);
    }
}
