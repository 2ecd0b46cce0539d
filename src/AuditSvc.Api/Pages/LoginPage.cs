using System.Text;
using AuditSvc.Data.Teams;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Http;
using Microsoft.AspNetCore.Routing;
using static AuditSvc.Api.Pages.PageHtml;

namespace AuditSvc.Api.Pages;

/// <summary><c>/ui/login</c> (a form taking an API key) and <c>/ui/logout</c>.</summary>
internal static class LoginPage
{
    public static RouteGroupBuilder MapLogin(this RouteGroupBuilder ui)
    {
        ui.MapGet("/login", Show).AllowAnonymous();
        ui.MapPost("/login", SignInAsync).AllowAnonymous();
        ui.MapPost("/logout", (Func<HttpContext, Task<IResult>>)SignOutAsync).RequireAuthorization(ReviewerCookie.Policy);
        return ui;
    }

    private static async Task<IResult> Show(HttpContext http, string? returnUrl)
    {
        var current = await http.AuthenticateAsync(ReviewerCookie.Scheme);
        if (current.Succeeded) return Results.Redirect(LocalOrDefault(returnUrl));
        return Form(http, returnUrl, null, StatusCodes.Status200OK);
    }

    private static async Task<IResult> SignInAsync(HttpContext http, ApiKeyStore keys)
    {
        var form = await PageForms.ReadValidAsync(http);
        if (form is null) return PageForms.Refused(http);
        var returnUrl = form["returnUrl"].ToString();
        var presented = form["key"].ToString().Trim();
        // The same check as a Bearer header: prefix lookup, SHA-256, constant-time compare, not revoked.
        var caller = presented.Length is > 0 and < 512 ? await keys.VerifyAsync(presented, http.RequestAborted) : null;
        var key = caller is null ? null : await keys.FindActiveAsync(ApiKeySecret.PrefixOf(presented)!, http.RequestAborted);
        if (caller is null || key is null || key.Id != caller.KeyId)
            return Form(http, returnUrl, "That key was not accepted: it is unknown, mistyped or revoked.", StatusCodes.Status401Unauthorized);

        await http.SignInAsync(ReviewerCookie.Scheme, ReviewerCookie.Principal(key), new AuthenticationProperties { IsPersistent = false });
        return SeeOther(LocalOrDefault(returnUrl));
    }

    private static async Task<IResult> SignOutAsync(HttpContext http)
    {
        if (await PageForms.ReadValidAsync(http) is null) return PageForms.Refused(http);
        await http.SignOutAsync(ReviewerCookie.Scheme);
        return SeeOther("/ui/login");
    }

    private static IResult Form(HttpContext http, string? returnUrl, string? error, int status)
    {
        var sb = new StringBuilder("<div class=\"login\"><h1>Sign in to review audits</h1>\n");
        if (error is not null) sb.Append("<p class=\"error\" id=\"login-error\">").Append(E(error)).Append("</p>\n");
        sb.Append("<form method=\"post\" action=\"/ui/login\" id=\"login\">").Append(PageForms.TokenField(http))
          .Append("<input type=\"hidden\" name=\"returnUrl\" value=\"").Append(E(LocalOrDefault(returnUrl))).Append("\">")
          .Append("<label for=\"key\">API key</label>")
          .Append("<input type=\"password\" id=\"key\" name=\"key\" autocomplete=\"off\" spellcheck=\"false\" required placeholder=\"ask_…\">")
          .Append("<button type=\"submit\">Sign in</button></form>\n")
          .Append("<p class=\"muted small\">Use the key your team's pipeline uses, or one made for you with ")
          .Append("<span class=\"mono\">auditsvc keys create --team &lt;team&gt; --name &lt;you&gt;</span>. The key is checked once; ")
          .Append("the browser then holds a session cookie, never the key. Revoking the key ends the session.</p></div>\n");
        return Html(Page(http, "Sign in", sb.ToString()), status);
    }

    /// <summary>Only this service's own pages are redirect targets, so the form cannot bounce a reviewer elsewhere.</summary>
    internal static string LocalOrDefault(string? url) =>
        url is { Length: > 4 and < 2048 } && url.StartsWith("/ui/", StringComparison.Ordinal) && !url.Contains('\\')
        && !url.Contains("//", StringComparison.Ordinal) && !url.Any(char.IsControl)
            ? url
            : "/ui/audits";
}
