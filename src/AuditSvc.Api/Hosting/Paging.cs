using Microsoft.AspNetCore.Http;

namespace AuditSvc.Api.Hosting;

/// <summary>
/// Pages of a list endpoint: <c>?limit=</c> (default <see cref="DefaultLimit"/>, at most <see cref="MaxLimit"/>) and
/// <c>?offset=</c>. A full page carries <c>Link: &lt;…&gt;; rel="next"</c>, so a client never gets an unbounded answer.
/// </summary>
public static class Paging
{
    public const int DefaultLimit = 100;
    public const int MaxLimit = 500;
    public const int MaxOffset = 10_000_000;

    /// <summary>The page asked for, or a problem naming the field; <paramref name="maxLimit"/> for a list of small rows.</summary>
    public static (int Limit, int Offset, IResult? Problem) Read(int? limit, int? offset, int maxLimit = MaxLimit)
    {
        if (limit is < 1 || limit > maxLimit) return (0, 0, ProblemHandling.Field("limit", $"must be 1 to {maxLimit}"));
        if (offset is < 0 or > MaxOffset) return (0, 0, ProblemHandling.Field("offset", $"must be 0 to {MaxOffset}"));
        return (limit ?? DefaultLimit, offset ?? 0, null);
    }

    /// <summary>Adds the next page's link when this page is full.</summary>
    public static void LinkNext(HttpContext http, int limit, int offset, int returned)
    {
        if (returned < limit) return;
        http.Response.Headers.Link = $"<{http.Request.Path}?limit={limit}&offset={offset + limit}>; rel=\"next\"";
    }
}
