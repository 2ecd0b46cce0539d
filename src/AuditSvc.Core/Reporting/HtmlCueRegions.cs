using System.Globalization;
using System.Text;
using AuditSvc.Core.Audits;
using static AuditSvc.Core.Reporting.HtmlText;

namespace AuditSvc.Core.Reporting;

public static partial class HtmlReport
{
    /// <summary>Per intervened value: the pixel map the region was read from, the region's box, and what was (not) run.</summary>
    private static void CueRegionsOf(StringBuilder sb, AttributeReport a)
    {
        if (a.Cues.Count == 0) return;
        sb.Append("<div class=\"regions\">");
        foreach (var c in a.Cues)
        {
            var r = c.Region;
            sb.Append("<figure class=\"region\">");
            RegionMap(sb, r);
            sb.Append("<figcaption><span class=\"cue\">").Append(E(a.Name)).Append('=').Append(E(c.Value)).Append("</span>")
              .Append(c.PushesToward is null ? " · pushes toward no class" : " · pushes toward " + E(c.PushesToward)).Append("<br>")
              .Append(r.Kind switch
              {
                  "local" => $"local region, {Pct(r.Share)} of the image: transplant and occlusion",
                  "global" => $"global ({Pct(r.Share)} of the image): no patch moved; colour transfer",
                  _ => "no pixel differs with the value: nothing to move",
              })
              .Append("<br><span class=\"muted\">").Append(Int(r.ImagesWith)).Append(" images with, ").Append(Int(r.ImagesWithout)).Append(" without; ")
              .Append(Int(c.Runs)).Append(" model runs</span>");
            if (c.Note is not null) sb.Append("<br><span class=\"note\">").Append(E(c.Note)).Append("</span>");
            sb.Append("</figcaption></figure>");
        }
        sb.Append("</div>");
    }

    /// <summary>
    /// The standardised difference map as an inline SVG (one cell per pooled block, darker = larger difference), the
    /// region's box outlined. Shape and outline carry the region as well as the shade does.
    /// </summary>
    private static void RegionMap(StringBuilder sb, RegionReport r)
    {
        var inv = CultureInfo.InvariantCulture;
        int w = Math.Max(1, r.MapWidth), h = Math.Max(1, r.MapHeight);
        sb.Append("<svg class=\"regionmap\" viewBox=\"0 0 ").Append(w).Append(' ').Append(h)
          .Append("\" width=\"128\" height=\"").Append((128 * h / w).ToString(inv)).Append("\" role=\"img\" aria-label=\"pixel difference map, region ")
          .Append(E(r.Kind)).Append("\"><rect width=\"").Append(w).Append("\" height=\"").Append(h).Append("\" class=\"bg\"/>");
        for (int i = 0; i < r.Map.Length && i < w * h; i++)
        {
            if (r.Map[i] < 5) continue;
            sb.Append("<rect x=\"").Append(i % w).Append("\" y=\"").Append(i / w).Append("\" width=\"1\" height=\"1\" fill-opacity=\"")
              .Append((r.Map[i] / 100.0).ToString("0.00", inv)).Append("\"/>");
        }
        if (r.Box is { } b && r.Kind == "local" && r.MapWidth > 0)
        {
            // The box is in input pixels; the map is pooled, so scale it by the map's cells per pixel.
            double sx = w / (double)Math.Max(1, r.InputWidth), sy = h / (double)Math.Max(1, r.InputHeight);
            sb.Append("<rect class=\"box\" x=\"").Append((b.X * sx).ToString("0.##", inv)).Append("\" y=\"").Append((b.Y * sy).ToString("0.##", inv))
              .Append("\" width=\"").Append((b.Width * sx).ToString("0.##", inv)).Append("\" height=\"").Append((b.Height * sy).ToString("0.##", inv)).Append("\"/>");
        }
        sb.Append("</svg>");
    }

}
