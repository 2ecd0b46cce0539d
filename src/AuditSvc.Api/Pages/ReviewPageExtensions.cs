using AuditSvc.Api.Auth;
using AuditSvc.Api.Hosting;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.DataProtection;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Pages;

/// <summary>
/// The reviewer's browser pages under <c>/ui</c>: a cookie scheme of their own (the REST API stays on Bearer keys
/// only, so a cross-site page can never act on it with a reviewer's cookie), antiforgery on every form.
/// </summary>
public static class ReviewPageExtensions
{
    public static IServiceCollection AddReviewPages(this IServiceCollection services, ServiceOptions settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        // Cookie tickets and antiforgery tokens are protected with keys kept in the artifact root, so a restart
        // does not sign everyone out and several API processes over the same root accept each other's cookies.
        services.AddDataProtection()
            .SetApplicationName("AuditSvc")
            .PersistKeysToFileSystem(new DirectoryInfo(Path.Combine(settings.DataRoot, "keys", "data-protection")));
        services.AddAntiforgery(PageForms.Configure);
        services.AddSingleton<ParsedResults>();
        services.AddAuthentication().AddCookie(ReviewerCookie.Scheme, ReviewerCookie.Configure);
        services.AddAuthorizationBuilder().AddPolicy(ReviewerCookie.Policy, p => p
            .AddAuthenticationSchemes(ReviewerCookie.Scheme)
            .RequireAuthenticatedUser()
            .RequireClaim(ApiKeyHandler.TeamIdClaim)
            .RequireClaim(ReviewerCookie.PrefixClaim));
        return services;
    }

    public static WebApplication MapReviewPages(this WebApplication app)
    {
        app.MapGet("/", () => Results.Redirect("/ui/audits")).AllowAnonymous().ExcludeFromDescription();
        app.MapGroup("/ui").RequireAuthorization(ReviewerCookie.Policy).RequireRateLimiting(KeyRateLimits.PagePolicy).ExcludeFromDescription()
            .MapLogin()
            .MapAuditList()
            .MapAuditPage();
        return app;
    }
}
