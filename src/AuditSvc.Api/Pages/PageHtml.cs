using System.Globalization;
using System.Net;
using System.Security.Claims;
using System.Text;
using AuditSvc.Core.Reporting;
using Microsoft.AspNetCore.Http;

namespace AuditSvc.Api.Pages;

/// <summary>
/// The frame every reviewer page shares: the report's own style sheet plus a few rules for forms, a top bar with
/// the signed-in team and key, and escaping. Every string from data goes through <see cref="E"/>.
/// </summary>
internal static class PageHtml
{
    private static readonly CultureInfo Inv = CultureInfo.InvariantCulture;

    // Added to the report's sheet, in its colours; no external fonts, images or scripts.
    private const string PageCss = """
.topbar { display: flex; align-items: baseline; gap: 18px; padding: 10px 24px 8px; background: var(--soft); border-bottom: 3px solid var(--accent); font-size: 13px; }
.topbar a { color: var(--fg); text-decoration: none; }
.topbar a:hover, .topbar a:focus { text-decoration: underline; }
.topbar .brand { font-family: Georgia, "DejaVu Serif", serif; font-size: 18px; font-weight: 700; color: var(--accent); }
.topbar .who { color: var(--muted); }
.topbar form { margin: 0 0 0 auto; }
.topbar button { background: transparent; color: var(--fg); border: 1px solid var(--line); }
.page { max-width: 1200px; margin: 0 auto; padding: 8px 24px 24px; }
.page h1 { font-size: 22px; margin: 16px 0 4px; }
button { font: inherit; padding: 4px 12px; border-radius: 0; border: 1px solid var(--accent); background: var(--accent); color: #fff; cursor: pointer; }
select, input[type=text], input[type=password], textarea { font: inherit; padding: 4px 6px; border: 1px solid var(--line); border-radius: 4px; background: #fff; }
label { font-weight: 600; }
.error { color: var(--block); background: var(--block-bg); border: 1px solid #f3b5ae; padding: 8px 12px; border-radius: 4px; }
.notice { background: var(--soft); border: 1px solid var(--line); padding: 8px 12px; border-radius: 4px; }
.login { max-width: 440px; margin: 64px auto; padding: 24px; border: 1px solid var(--line); border-radius: 6px; background: var(--soft); }
.login input[type=password] { width: 100%; margin: 6px 0 12px; }
.filters { display: flex; flex-wrap: wrap; gap: 8px 16px; align-items: center; margin: 12px 0; }
.progress { position: relative; width: 100%; max-width: 520px; height: 16px; background: #eceff2; border-radius: 3px; overflow: hidden; }
.progress span { position: absolute; left: 0; top: 0; bottom: 0; background: var(--accent); }
.progress.small { max-width: 120px; height: 8px; display: inline-block; vertical-align: middle; }
.crumbs { margin: 12px 0 0; color: var(--muted); }
.meta { color: var(--muted); margin: 0 0 8px; }
.decision-view > .verdict { margin-top: 4px; }
.filters select { max-width: 13em; }
.filters input[type=text] { width: 16em; }
.confirm { background: var(--pass-bg); color: var(--pass); border: 1px solid var(--pass); padding: 6px 10px; margin: 0 0 8px; font-weight: 600; }
.decided { margin: 0 0 8px; }
form.decide { display: flex; flex-wrap: wrap; gap: 8px 16px; align-items: flex-start; }
form.decide fieldset { border: 0; padding: 0; margin: 0; display: flex; flex-direction: column; gap: 2px; }
form.decide legend { font-weight: 700; margin-bottom: 4px; padding: 0; }
form.decide label { font-weight: 400; }
form.decide textarea { width: min(420px, 100%); }
form.decide button { align-self: flex-end; }
table.history tr.superseded td { color: var(--muted); }
.more-links { margin: 16px 0 32px; }
.override { border: 2px solid var(--warn); background: var(--warn-bg); padding: 8px 12px; margin: 8px 0; }
details.override-form { margin: 16px 0; }
details.override-form summary { cursor: pointer; font-weight: 600; }
:focus-visible { outline: 3px solid var(--warn); outline-offset: 2px; }
""";

    public static string E(string? s) => s is null ? "" : WebUtility.HtmlEncode(s);

    public static string Time(DateTime t) =>
        (t.Kind == DateTimeKind.Local ? t.ToUniversalTime() : t).ToString("yyyy-MM-dd HH:mm", Inv) + " UTC";

    public static string Num(double v, string format = "0.##") => double.IsFinite(v) ? v.ToString(format, Inv) : "—";

    public static string Int(long v) => v.ToString("N0", Inv);

    public static string Duration(double seconds) => seconds switch
    {
        < 1 => "under a second",
        < 90 => $"{Math.Round(seconds).ToString(Inv)} s",
        < 5400 => $"{Math.Round(seconds / 60).ToString(Inv)} min",
        _ => $"{(seconds / 3600).ToString("0.#", Inv)} h",
    };

    public static string VerdictClass(string? verdict) => verdict switch { "pass" => "v-pass", "block" => "v-block", _ => "v-warn" };

    /// <summary>A whole page: head with the shared sheet, the top bar when someone is signed in, then <paramref name="body"/>.</summary>
    public static string Page(HttpContext http, string title, string body, int? refreshSeconds = null)
    {
        var sb = new StringBuilder(body.Length + 8192);
        sb.Append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
          .Append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
        if (refreshSeconds is { } r) sb.Append("<meta http-equiv=\"refresh\" content=\"").Append(r.ToString(Inv)).Append("\">\n");
        sb.Append("<title>").Append(E(title)).Append(" · AuditSvc</title>\n<style>").Append(ReportStyles.Css).Append(PageCss).Append("</style>\n</head>\n<body>\n");
        TopBar(sb, http);
        sb.Append(body).Append("</body>\n</html>\n");
        return sb.ToString();
    }

    public static IResult Html(string html, int status = StatusCodes.Status200OK) =>
        Results.Content(html, "text/html; charset=utf-8", Encoding.UTF8, status);

    /// <summary>303 See Other: after a form POST the browser follows with a GET (a reload does not post again).</summary>
    public static IResult SeeOther(string location) => new SeeOtherResult(location);

    private sealed class SeeOtherResult(string location) : IResult
    {
        public Task ExecuteAsync(HttpContext httpContext)
        {
            httpContext.Response.StatusCode = StatusCodes.Status303SeeOther;
            httpContext.Response.Headers.Location = location;
            return Task.CompletedTask;
        }
    }

    /// <summary>A short page with one message, for refusals and errors (404, 400).</summary>
    public static IResult Message(HttpContext http, int status, string title, string message, string? backHref = null)
    {
        var body = new StringBuilder("<div class=\"page\"><h1>").Append(E(title)).Append("</h1><p class=\"error\">").Append(E(message)).Append("</p>");
        if (backHref is not null) body.Append("<p><a href=\"").Append(E(backHref)).Append("\">Back</a></p>");
        body.Append("</div>\n");
        return Html(Page(http, title, body.ToString()), status);
    }

    private static void TopBar(StringBuilder sb, HttpContext http)
    {
        sb.Append("<div class=\"topbar\"><a class=\"brand\" href=\"/ui/audits\">AuditSvc</a>");
        if (http.User.Identity is { IsAuthenticated: true } && http.User.FindFirstValue(ReviewerCookie.PrefixClaim) is not null)
        {
            sb.Append("<a href=\"/ui/audits\">Audits</a>")
              .Append("<span class=\"who\">team ").Append(E(http.User.FindFirstValue(Auth.ApiKeyHandler.TeamNameClaim)))
              .Append(" · ").Append(E(ReviewerCookie.Reviewer(http.User))).Append("</span>")
              .Append("<form method=\"post\" action=\"/ui/logout\">").Append(PageForms.TokenField(http))
              .Append("<button type=\"submit\">Sign out</button></form>");
        }
        sb.Append("</div>\n");
    }
}
