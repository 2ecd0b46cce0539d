using System.Text;
using AuditSvc.Api.Auth;
using AuditSvc.Api.Engine;
using AuditSvc.Api.Jobs;
using AuditSvc.Core;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;
using AuditSvc.Data.Audits;
using Microsoft.AspNetCore.Http;
using static AuditSvc.Api.Pages.PageHtml;

namespace AuditSvc.Api.Pages;

/// <summary>
/// <c>/ui/audits/{id}/units/{unit}?layer=…</c>: one unit of a finished audit, and
/// <c>/ui/audits/{id}/exemplars/{item}?box=x,y,w,h[&amp;whole=1]</c>: one exemplar picture, cut from the stored image.
/// </summary>
internal static class UnitPage
{
    /// <summary>Layer names are tensor names; longer ones are not ours.</summary>
    private const int MaxLayerName = 512;

    public static string Href(Guid auditId, string layer, int unit, bool whole = false) =>
        $"/ui/audits/{auditId}/units/{unit}?layer={Uri.EscapeDataString(layer)}{(whole ? "&view=whole" : "")}";

    public static async Task<IResult> ShowAsync(Guid id, int unit, HttpContext http, AuditStore audits, ParsedResults results, CancellationToken ct)
    {
        var team = http.User.TeamId();
        var layer = http.Request.Query["layer"].ToString();
        var back = $"/ui/audits/{id}";
        if (await results.GetAsync(audits, team, id, ct) is not { } parsed)
            return Message(http, 404, "Unit not found", $"No finished audit {id} for this team.", "/ui/audits");
        if (layer.Length is 0 or > MaxLayerName)
            return Message(http, 400, "Unit not found", "layer is required (a tensor name of the model).", back);
        var result = parsed.Result;
        if (result is null || !HtmlReport.HasUnit(result, layer, unit))
            return Message(http, 404, "Unit not found", $"This audit has no findings for unit {unit} of {layer}.", back);

        bool whole = http.Request.Query["view"] == "whole";
        var view = new ReportView { UnitHref = (l, u) => Href(id, l, u) };
        var sb = new StringBuilder(16 * 1024);
        sb.Append("<div class=\"page\"><p class=\"crumbs small\"><a href=\"/ui/audits\">Audits</a> / <a href=\"").Append(back).Append("\">this audit</a> / unit</p>")
          .Append(HtmlReport.Unit(result, layer, unit, new LinkedExemplars(id), view, whole, Href(id, layer, unit, !whole)))
          .Append("</div>\n");
        return Html(Page(http, $"{PlainWords.LayerName(layer)} · unit {unit}", sb.ToString()));
    }

    public static async Task<IResult> ExemplarAsync(Guid id, int item, HttpContext http, AuditStore audits, AuditInputsLoader loader,
        IAuditEngine engine, CancellationToken ct)
    {
        var team = http.User.TeamId();
        var box = LinkedExemplars.ParseBox(http.Request.Query["box"]);
        if (box is null) return Results.Problem(statusCode: 400, title: "box must be x,y,width,height in input pixels");
        if (await audits.GetAsync(team, id, ct) is not { State: "done" }) return Results.NotFound();
        byte[]? png;
        try
        {
            png = await engine.RenderExemplarAsync(await loader.LoadAsync(id, ct), item, box, http.Request.Query["whole"] == "1", ct);
        }
        catch (Exception e) when (e is AuditInputException or IOException)
        {
            png = null;
        }
        if (png is null) return Results.NotFound();
        // An audit's images never change: the browser keeps the picture and does not ask again.
        http.Response.Headers.CacheControl = "private, max-age=604800, immutable";
        return Results.File(png, "image/png");
    }
}
