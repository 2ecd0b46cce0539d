using Microsoft.AspNetCore.Antiforgery;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.DependencyInjection;

namespace AuditSvc.Api.Pages;

/// <summary>
/// Antiforgery for the pages' forms, checked explicitly in each POST handler: the REST API's form uploads stay
/// outside it (they are Bearer-only, which a cross-site page cannot send).
/// </summary>
internal static class PageForms
{
    public const string FieldName = "__af";
    public const string CookieName = "auditsvc.af";

    public static void Configure(AntiforgeryOptions o)
    {
        o.FormFieldName = FieldName;
        o.HeaderName = null;
        o.Cookie.Name = CookieName;
        o.Cookie.HttpOnly = true;
        o.Cookie.SameSite = SameSiteMode.Strict;
        o.Cookie.SecurePolicy = CookieSecurePolicy.SameAsRequest;
    }

    /// <summary>The hidden field a form carries; issues the matching cookie on first use.</summary>
    public static string TokenField(HttpContext http)
    {
        var tokens = http.RequestServices.GetRequiredService<IAntiforgery>().GetAndStoreTokens(http);
        return $"<input type=\"hidden\" name=\"{FieldName}\" value=\"{PageHtml.E(tokens.RequestToken)}\">";
    }

    /// <summary>The posted form when it carries a valid token for the current user, else null.</summary>
    public static async Task<IFormCollection?> ReadValidAsync(HttpContext http)
    {
        if (!http.Request.HasFormContentType) return null;
        if (!await http.RequestServices.GetRequiredService<IAntiforgery>().IsRequestValidAsync(http)) return null;
        return await http.Request.ReadFormAsync(http.RequestAborted);
    }

    public static IResult Refused(HttpContext http) => PageHtml.Message(http, StatusCodes.Status400BadRequest, "Form refused",
        "This form was not accepted: its anti-forgery token is missing or stale. Go back, reload the page and send it again.");
}
