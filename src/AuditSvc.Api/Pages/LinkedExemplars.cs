using System.Globalization;
using AuditSvc.Core.Audits;
using AuditSvc.Core.Reporting;

namespace AuditSvc.Api.Pages;

/// <summary>
/// Exemplar pictures as links to <c>/ui/audits/{id}/exemplars/{item}</c>: the pages stay small and the browser caches
/// each picture, which the service cuts from the stored image on first request.
/// </summary>
internal sealed class LinkedExemplars(Guid auditId) : IExemplarImages
{
    public string? Crop(Exemplar e) => Href(auditId, e.Item, e.Box, whole: false);

    public string? Whole(Exemplar e) => Href(auditId, e.Item, e.Box, whole: true);

    public static string Href(Guid auditId, int item, BoxDto box, bool whole) => string.Create(CultureInfo.InvariantCulture,
        $"/ui/audits/{auditId}/exemplars/{item}?box={box.X},{box.Y},{box.Width},{box.Height}{(whole ? "&whole=1" : "")}");

    /// <summary>Parses <c>x,y,w,h</c>: four whole numbers, a box of at least one pixel inside a bounded input.</summary>
    public static BoxDto? ParseBox(string? text)
    {
        if (text is null || text.Length > 64) return null;
        var parts = text.Split(',');
        if (parts.Length != 4) return null;
        var v = new int[4];
        for (int i = 0; i < 4; i++)
            if (!int.TryParse(parts[i], NumberStyles.None, CultureInfo.InvariantCulture, out v[i]) || v[i] > MaxSide) return null;
        return v[2] >= 1 && v[3] >= 1 ? new BoxDto(v[0], v[1], v[2], v[3]) : null;
    }

    /// <summary>No model input intake takes is larger than this on a side, so no peak box is either.</summary>
    private const long MaxSide = AuditSvc.Compute.Models.OnnxGuard.MaxInputSide;
}
