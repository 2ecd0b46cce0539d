using AuditSvc.Core.Audits;

namespace AuditSvc.Core.Reporting;

/// <summary>
/// Pictures of exemplars for the report, as <c>data:image/png;base64,…</c> URIs so the page stays one
/// self-contained file. Either method returns null when the image cannot be read; the report shows a placeholder.
/// </summary>
public interface IExemplarImages
{
    /// <summary>The exemplar's peak box with a margin, enlarged, the box outlined.</summary>
    string? Crop(Exemplar e);

    /// <summary>The whole image at the model's input framing, small, the box outlined.</summary>
    string? Whole(Exemplar e);
}

/// <summary>No pictures: every exemplar shows as a placeholder (for hosts without access to the images).</summary>
public sealed class NoExemplarImages : IExemplarImages
{
    public static readonly NoExemplarImages Instance = new();

    public string? Crop(Exemplar e) => null;

    public string? Whole(Exemplar e) => null;
}
